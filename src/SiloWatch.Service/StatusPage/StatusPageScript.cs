namespace SiloWatch.Service.StatusPage;

public static partial class StatusPageAssets
{
    public const string Script = """
        'use strict';
        (() => {
          const $ = (id) => document.getElementById(id);
          let state = null;
          let user = null;
          let shelveTarget = null;

          const el = (tag, cls, text) => {
            const e = document.createElement(tag);
            if (cls) e.className = cls;
            if (text !== undefined && text !== null) e.textContent = text;
            return e;
          };
          const num = (v, digits) => (v === null || v === undefined || !isFinite(v)) ? null : Number(v).toFixed(digits);
          const orDash = (s) => s === null ? '\u2014' : s;
          const utc = (iso) => iso ? iso.replace('T', ' ').replace(/\.\d+/, '').replace('+00:00', 'Z') : '';
          const duration = (s) => {
            if (s === null || s === undefined || !isFinite(s)) return null;
            const h = Math.floor(s / 3600), m = Math.floor((s % 3600) / 60);
            return h > 99 ? '> 99 h' : h + ' h ' + String(m).padStart(2, '0') + ' min';
          };
          const stateLabel = (s) => s.replace(/-/g, ' ');

          function renderSilo(s) {
            const card = el('article', 'silo');
            card.dataset.silo = s.site + '/' + s.silo;
            card.dataset.quality = s.quality;
            card.dataset.alarms = String(s.alarms.length > 0);
            const h = el('h3');
            h.append(el('span', 'id', s.silo), el('span', 'name', s.name));
            card.append(h, el('div', 'material', s.material + ' \u00b7 ' + s.site + ' \u00b7 ' + (s.method || '')));

            const mass = num(s.massKg / 1000, 1);
            const big = el('div', 'big mass');
            big.append(el('span', 'value', orDash(mass)), el('span', 'unit', ' t'));
            card.append(big);
            const lo = num(s.massLow95Kg / 1000, 1), hi = num(s.massHigh95Kg / 1000, 1);
            card.append(el('div', 'band', lo !== null && hi !== null ? '95 % between ' + lo + ' and ' + hi + ' t' : 'mass not known'));

            const pct = num(s.percentFull, 1);
            const fill = el('div', 'fill');
            fill.setAttribute('role', 'meter');
            fill.setAttribute('aria-valuemin', '0');
            fill.setAttribute('aria-valuemax', '100');
            const bar = el('span');
            if (pct !== null) {
              fill.setAttribute('aria-valuenow', pct);
              bar.style.width = Math.max(0, Math.min(100, Number(pct))) + '%';
            }
            fill.append(bar);
            card.append(fill);

            const dl = el('dl', 'figures');
            const row = (label, cls, value) => { dl.append(el('dt', null, label), el('dd', cls, orDash(value))); };
            row('Full', 'pct', pct === null ? null : pct + ' %');
            row('Level', 'level', num(s.levelM, 2) === null ? null : num(s.levelM, 2) + ' m');
            const rate = num(s.rateKgPerS * 3.6, 1);
            row('Rate', 'rate', rate === null ? null : (rate > 0 ? '+' : '') + rate + ' t/h');
            row('To empty', 'tte', duration(s.timeToEmptyS));
            row('To full', 'ttf', duration(s.timeToFullS));
            row('Contents', 'discharge', s.discharge);
            card.append(dl);

            const q = el('div', 'quality');
            q.append(el('b', null, s.quality), document.createTextNode(s.reason && s.reason !== 'ok' ? ': ' + s.reason : ''));
            q.append(el('div', 'band', s.ts ? 'as of ' + utc(s.ts) : 'no estimate yet'));
            card.append(q);

            const rings = s.rings.filter(r => r.a1Ratio !== null);
            if (rings.length > 0) {
              const ul = el('ul', 'rings');
              for (const r of rings) {
                ul.append(el('li', null, 'ring ' + r.ring + ': asymmetry ' + num(r.a1Ratio, 2) + (r.directionDeg !== null ? ' toward ' + num(r.directionDeg, 0) + '\u00b0' : '')));
              }
              card.append(ul);
            }

            if (s.alarms.length > 0) {
              const ul = el('ul', 'silo-alarms');
              for (const a of s.alarms) ul.append(el('li', null, stateLabel(a.state) + ': ' + a.alarm.split('/').pop()));
              card.append(ul);
            }
            return card;
          }

          function renderSite(s) {
            const tr = el('tr');
            tr.dataset.site = s.site;
            tr.dataset.flood = String(s.flood);
            const name = el('td');
            name.append(el('b', null, s.site), document.createTextNode(s.name ? ' ' + s.name : ''));
            tr.append(name, el('td', 'silo-count', String(s.silos)));
            const within = s.floodWindowMin === null ? '' : ' within ' + num(s.floodWindowMin, 0) + ' min';
            tr.append(el('td', 'flood', s.flood
              ? 'IN FLOOD: ' + num(s.floodAlarms, 0) + ' alarms' + within + ', since ' + utc(s.floodSince) + '. Work from the highest priority down.'
              : 'no alarm flood'));
            return tr;
          }

          function actionButton(label, cls, handler) {
            const b = el('button', cls, label);
            b.type = 'button';
            b.addEventListener('click', handler);
            return b;
          }

          function renderAlarm(a) {
            const tr = el('tr');
            tr.dataset.alarm = a.alarm;
            tr.dataset.state = a.state;
            tr.append(el('td', 'pri', 'P' + a.priority));
            tr.append(el('td', null, a.silo ? a.site + '/' + a.silo : a.site));
            const st = el('td');
            st.append(el('span', 'state', stateLabel(a.state)));
            tr.append(st);
            tr.append(el('td', 'msg', a.message));
            const v = num(a.value, 2), sp = num(a.setpoint, 2);
            tr.append(el('td', null, orDash(v) + ' / ' + orDash(sp) + ' ' + a.unit));
            tr.append(el('td', null, utc(a.activated || a.since)));
            const act = el('td', 'actions');
            if (user && a.silo) {
              const name = a.alarm.split('/').pop();
              if (!a.acknowledged && a.state !== 'shelved') act.append(actionButton('Acknowledge', 'ack', () => act_(a, name, 'ack', {})));
              if (a.state === 'shelved') act.append(actionButton('Unshelve', 'unshelve', () => act_(a, name, 'unshelve', {})));
              else if (a.state !== 'out-of-service') act.append(actionButton('Shelve', 'shelve', () => openShelve(a, name)));
              if (a.state === 'latched') act.append(actionButton('Reset', 'reset', () => act_(a, name, 'reset', {})));
            } else if (!user) {
              act.append(el('span', 'quiet', 'log in to act'));
            }
            tr.append(act);
            return tr;
          }

          function render() {
            if (!state) return;
            $('asof').textContent = 'instance ' + state.instance + ' \u00b7 ' + utc(state.generated);
            $('sites').tBodies[0].replaceChildren(...state.sites.map(renderSite));
            const silos = $('silos');
            silos.replaceChildren(...state.silos.map(renderSilo));
            const alarms = state.silos.flatMap(s => s.alarms)
              .filter((a, i, all) => all.findIndex(b => b.alarm === a.alarm) === i)
              .sort((x, y) => x.priority - y.priority || (y.acknowledged ? 0 : 1) - (x.acknowledged ? 0 : 1));
            $('alarmCount').textContent = alarms.length ? '(' + alarms.length + ', ' + alarms.filter(a => !a.acknowledged).length + ' unacknowledged)' : '';
            $('alarms').hidden = alarms.length === 0;
            $('noAlarms').hidden = alarms.length > 0;
            $('alarms').tBodies[0].replaceChildren(...alarms.map(renderAlarm));
          }

          async function act_(a, name, action, body) {
            const url = '/api/alarms/' + encodeURIComponent(a.site) + '/' + encodeURIComponent(a.silo) + '/' + encodeURIComponent(name) + '/' + action;
            const r = await fetch(url, { method: 'POST', headers: { 'Content-Type': 'application/json', 'X-SiloWatch-Action': '1' }, body: JSON.stringify(body), credentials: 'same-origin' });
            let detail = '';
            try { detail = (await r.json()).detail || ''; } catch (e) { detail = r.statusText; }
            $('actionResult').textContent = (r.ok ? action + ' ' + name + ': ' : action + ' refused: ') + detail;
            if (r.status === 401) setUser(null);
          }

          function openShelve(a, name) {
            shelveTarget = { a, name };
            $('shelveWhat').textContent = a.alarm;
            $('shelveReason').value = '';
            $('shelveDialog').showModal();
          }

          $('shelveDialog').addEventListener('close', () => {
            if ($('shelveDialog').returnValue === 'ok' && shelveTarget && $('shelveReason').value.trim()) {
              act_(shelveTarget.a, shelveTarget.name, 'shelve', { minutes: Number($('shelveMinutes').value), reason: $('shelveReason').value.trim() });
            }
            shelveTarget = null;
          });

          function setUser(name) {
            user = name;
            $('login').hidden = !!name;
            $('who').hidden = !name;
            $('whoName').textContent = name || '';
            render();
          }

          $('login').addEventListener('submit', async (ev) => {
            ev.preventDefault();
            $('loginError').textContent = '';
            const r = await fetch('/api/session', { method: 'POST', headers: { 'Content-Type': 'application/json' }, credentials: 'same-origin',
              body: JSON.stringify({ name: $('loginName').value, password: $('loginPassword').value }) });
            $('loginPassword').value = '';
            if (r.ok) setUser((await r.json()).user); else $('loginError').textContent = 'wrong name or password';
          });

          $('logout').addEventListener('click', async () => {
            await fetch('/api/session', { method: 'DELETE', credentials: 'same-origin' });
            setUser(null);
          });

          function connect() {
            const source = new EventSource('/api/status/stream');
            source.addEventListener('status', (ev) => {
              $('link').dataset.state = 'live';
              document.body.dataset.link = 'live';
              $('link').textContent = 'live';
              state = JSON.parse(ev.data);
              if (state.caution) $('caution').textContent = state.caution;
              render();
            });
            source.addEventListener('error', () => {
              $('link').dataset.state = 'lost';
              document.body.dataset.link = 'lost';
              $('link').textContent = 'connection lost: values not updating';
            });
          }

          fetch('/api/session', { credentials: 'same-origin' }).then(r => r.json()).then(s => setUser(s.user)).catch(() => setUser(null));
          connect();
        })();
        """;
}
