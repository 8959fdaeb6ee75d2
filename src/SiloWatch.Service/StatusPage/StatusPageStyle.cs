namespace SiloWatch.Service.StatusPage;

public static partial class StatusPageAssets
{
    public const string Css = """
        :root {
          --paper: #f3f1ec; --card: #ffffff; --ink: #1b1b1a; --muted: #5d5a55; --rule: #d2cdc3;
          --accent: #274a78; --good: #2f6b3a; --warn: #8a5a00; --bad: #a3231b; --shelved: #6b6b6b;
          font-size: 17px;
        }
        @media (prefers-color-scheme: dark) {
          :root { --paper: #121416; --card: #1c1f22; --ink: #eceae6; --muted: #a9a59e; --rule: #34383d;
                  --accent: #8fb4e8; --good: #7cc48a; --warn: #e6b450; --bad: #ff8a7f; --shelved: #9a9a9a; }
        }
        * { box-sizing: border-box; }
        [hidden] { display: none !important; }
        body { margin: 0; background: var(--paper); color: var(--ink); font-family: "DejaVu Sans", Verdana, sans-serif; line-height: 1.35; }
        .top { display: flex; flex-wrap: wrap; align-items: center; gap: .6rem 1.2rem; padding: .6rem 1rem; border-bottom: 3px solid var(--accent); }
        h1 { font-size: 1.3rem; margin: 0; letter-spacing: .02em; }
        h1 .sub { font-weight: normal; color: var(--muted); }
        h2 { font-size: 1.1rem; margin: 1.2rem 0 .5rem; text-transform: uppercase; letter-spacing: .08em; color: var(--muted); }
        .link { padding: .1rem .5rem; border: 2px solid currentColor; border-radius: 3px; font-weight: bold; font-size: .85rem; text-transform: uppercase; }
        .link[data-state="live"] { color: var(--good); }
        .link[data-state="connecting"], .link[data-state="lost"] { color: var(--bad); }
        .asof { color: var(--muted); font-size: .9rem; }
        .login { display: flex; flex-wrap: wrap; gap: .4rem; align-items: center; margin-left: auto; font-size: .9rem; }
        .login input { width: 9rem; font: inherit; padding: .15rem .3rem; }
        .who { margin-left: auto; }
        button { font: inherit; padding: .2rem .7rem; border: 2px solid var(--accent); background: var(--card); color: var(--accent); border-radius: 3px; cursor: pointer; }
        button:hover, button:focus-visible { background: var(--accent); color: var(--card); }
        .error { color: var(--bad); }
        .caution { margin: 0; padding: .5rem 1rem; border-bottom: 1px solid var(--rule); font-size: .9rem; color: var(--muted); }
        main { padding: 0 1rem 1rem; }
        .quiet { color: var(--muted); }
        .count { color: var(--ink); }
        .alarms { width: 100%; border-collapse: collapse; background: var(--card); }
        .alarms th, .alarms td, .sites th, .sites td { text-align: left; padding: .35rem .5rem; border-bottom: 1px solid var(--rule); vertical-align: top; }
        .alarms th, .sites th { font-size: .8rem; text-transform: uppercase; color: var(--muted); }
        .alarms tr, .sites tr { border-left: 8px solid transparent; }
        .alarms tr[data-state="unacknowledged"], .alarms tr[data-state="returned-to-normal-unacknowledged"] { border-left-color: var(--bad); font-weight: bold; }
        .alarms tr[data-state="acknowledged"], .alarms tr[data-state="latched"] { border-left-color: var(--warn); }
        .alarms tr[data-state="shelved"], .alarms tr[data-state="out-of-service"] { border-left-color: var(--shelved); color: var(--muted); }
        .alarms td.msg { font-weight: normal; max-width: 40rem; }
        .alarms td.actions button { margin: 0 .3rem .3rem 0; }
        .state { display: inline-block; padding: 0 .35rem; border: 1px solid currentColor; border-radius: 2px; font-size: .8rem; text-transform: uppercase; white-space: nowrap; }
        .pri { font-weight: bold; white-space: nowrap; }
        .result { min-height: 1.3em; color: var(--muted); }
        .sites { border-collapse: collapse; background: var(--card); min-width: 50%; }
        .sites tr[data-flood="true"] { border-left-color: var(--bad); }
        .sites tr[data-flood="true"] td.flood { color: var(--bad); font-weight: bold; }
        .silos { display: grid; grid-template-columns: repeat(auto-fill, minmax(17rem, 1fr)); gap: .8rem; }
        .silo { background: var(--card); border: 1px solid var(--rule); border-top: 6px solid var(--good); padding: .6rem .8rem; }
        .silo[data-quality="uncertain"] { border-top-color: var(--warn); }
        .silo[data-quality="bad"] { border-top-color: var(--bad); }
        .silo[data-alarms="true"] { outline: 3px solid var(--bad); outline-offset: -1px; }
        .silo h3 { margin: 0 0 .3rem; font-size: 1rem; }
        .silo h3 .id { font-size: 1.3rem; margin-right: .4rem; }
        .silo .material { color: var(--muted); font-size: .85rem; }
        .big { font-size: 2rem; font-weight: bold; font-variant-numeric: tabular-nums; }
        .big .unit { font-size: 1rem; font-weight: normal; color: var(--muted); }
        .band { color: var(--muted); font-size: .85rem; }
        .fill { height: .8rem; border: 1px solid var(--ink); margin: .35rem 0; background: var(--paper); }
        .fill > span { display: block; height: 100%; background: var(--accent); }
        dl.figures { display: grid; grid-template-columns: auto 1fr; gap: .1rem .8rem; margin: .3rem 0; font-variant-numeric: tabular-nums; }
        dl.figures dt { color: var(--muted); }
        dl.figures dd { margin: 0; text-align: right; }
        .quality { font-size: .9rem; }
        .quality b { text-transform: uppercase; }
        .silo[data-quality="bad"] .big, .silo[data-quality="bad"] dl.figures dd { color: var(--muted); text-decoration: line-through 2px var(--bad); }
        .silo[data-quality="bad"] { background-image: repeating-linear-gradient(135deg, transparent 0 12px, rgba(163,35,27,.07) 12px 24px); }
        body[data-link="lost"] .silo, body[data-link="lost"] .alarms, body[data-link="lost"] .sites { opacity: .5; filter: grayscale(1); }
        .rings { font-size: .85rem; color: var(--muted); margin: .2rem 0 0; padding-left: 1rem; }
        .silo-alarms { margin: .3rem 0 0; padding-left: 1rem; color: var(--bad); font-size: .9rem; }
        .foot { padding: .5rem 1rem 1rem; color: var(--muted); font-size: .85rem; }
        dialog { border: 2px solid var(--accent); background: var(--card); color: var(--ink); max-width: 28rem; }
        dialog label { display: block; margin: .5rem 0; }
        dialog input, dialog select { font: inherit; width: 100%; }
        .buttons { display: flex; gap: .5rem; justify-content: flex-end; }
        @media (max-width: 40rem) {
          :root { font-size: 16px; }
          .alarms thead { display: none; }
          .alarms tr { display: block; border-bottom: 1px solid var(--rule); }
          .alarms td { display: block; border: 0; padding: .15rem .5rem; }
          .login { margin-left: 0; }
        }
        """;
}
