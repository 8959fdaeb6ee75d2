namespace SiloWatch.Service.StatusPage;

/// <summary>
/// The page, its style and its script, compiled in so that the service needs no files beside it.
/// Plain HTML, no framework; live updates over server-sent events (/api/status/stream).
/// </summary>
public static partial class StatusPageAssets
{
    public const string Html = """
        <!doctype html>
        <html lang="en">
        <head>
          <meta charset="utf-8">
          <meta name="viewport" content="width=device-width, initial-scale=1">
          <title>SiloWatch status</title>
          <link rel="stylesheet" href="/status.css">
        </head>
        <body>
          <header class="top">
            <h1>SiloWatch <span class="sub">status</span></h1>
            <span id="link" class="link" data-state="connecting" role="status">connecting</span>
            <span id="asof" class="asof"></span>
            <form id="login" class="login" autocomplete="on">
              <label>User <input id="loginName" name="username" autocomplete="username" required></label>
              <label>Password <input id="loginPassword" name="password" type="password" autocomplete="current-password" required></label>
              <button type="submit">Log in</button>
              <span id="loginError" class="error" role="alert"></span>
            </form>
            <span id="who" class="who" hidden>Acting as <b id="whoName"></b> <button id="logout" type="button">Log out</button></span>
          </header>
          <p id="caution" class="caution">Monitoring supplements inspection; it does not replace it, and these alarms are not a safety function.
            Alarm limits are set by a licensed structural engineer under the local code. On a wall-load alarm stop or slow the discharge
            as the site procedure says and keep people clear of the silo. Never enter a silo.</p>
          <main>
            <section aria-labelledby="alarmsTitle">
              <h2 id="alarmsTitle">Alarms <span id="alarmCount" class="count"></span></h2>
              <p id="noAlarms" class="quiet">No active alarms.</p>
              <table id="alarms" class="alarms" hidden>
                <thead><tr><th>Pri</th><th>Silo</th><th>State</th><th>Alarm</th><th>Value / limit</th><th>Since</th><th>Actions</th></tr></thead>
                <tbody></tbody>
              </table>
              <p id="actionResult" class="result" role="status"></p>
            </section>
            <section aria-labelledby="sitesTitle">
              <h2 id="sitesTitle">Sites</h2>
              <table id="sites" class="sites">
                <thead><tr><th>Site</th><th>Silos</th><th>Alarm flood</th></tr></thead>
                <tbody></tbody>
              </table>
            </section>
            <section aria-labelledby="silosTitle">
              <h2 id="silosTitle">Silos</h2>
              <div id="silos" class="silos"></div>
            </section>
          </main>
          <dialog id="shelveDialog">
            <form id="shelveForm" method="dialog">
              <h3>Shelve <span id="shelveWhat"></span></h3>
              <p class="quiet">A shelved alarm is hidden for a limited time and returns by itself. Give the reason for the record.</p>
              <label>For <select id="shelveMinutes"><option value="15">15 min</option><option value="60" selected>1 h</option><option value="240">4 h</option><option value="720">12 h</option></select></label>
              <label>Reason <input id="shelveReason" required maxlength="200"></label>
              <div class="buttons"><button value="cancel" formnovalidate>Cancel</button><button id="shelveConfirm" value="ok">Shelve</button></div>
            </form>
          </dialog>
          <footer class="foot">Values marked stale or bad are not to be trusted. Times are UTC.</footer>
          <script src="/status.js"></script>
        </body>
        </html>
        """;
}
