/**
 * The page shell of every HTML report: one self-contained document (styles inline, charts inline
 * as SVG, no script that runs, no request leaves the file). A Content-Security-Policy forbids
 * scripts and every fetch outright, so even a string that escaped escaping could not run or call
 * out. The report's look: "field notebook" — ink on paper, Okabe-Ito accents (see palette.ts),
 * a verdict band at the top, numbered sections, and a print stylesheet that drops colour fills,
 * keeps figures whole and prints on A4 / Letter.
 */
import { esc, jsonForScript } from "./escape.js";
import { ROLE, OKABE_ITO } from "./palette.js";

const CSS = `
:root{--ink:${ROLE.ink};--muted:${ROLE.muted};--rule:#d8dce4;--paper:#fbfaf7;--card:#ffffff;
--designer:${ROLE.designer};--intent:${ROLE.intent};--alert:${ROLE.alert};--aligned:${ROLE.aligned};--inconclusive:${ROLE.inconclusive};--decoupled:${ROLE.decoupled};--sky:${OKABE_ITO.skyBlue};}
*{box-sizing:border-box}
html{background:var(--paper);color:var(--ink);font:15px/1.5 system-ui,-apple-system,"Segoe UI",Roboto,"DejaVu Sans",sans-serif}
body{margin:0 auto;max-width:1020px;padding:28px 32px 48px}
h1{font-size:24px;line-height:1.25;margin:4px 0 2px;font-weight:700;letter-spacing:-.01em}
h2{font-size:17px;margin:0 0 10px;font-weight:700;display:flex;gap:10px;align-items:baseline}
h2 .n{font:600 12px/1 ui-monospace,"DejaVu Sans Mono",monospace;color:var(--muted);border:1px solid var(--rule);border-radius:3px;padding:3px 5px}
h3{font-size:14px;margin:16px 0 6px}
p{margin:6px 0}
code,pre,.mono{font-family:ui-monospace,"DejaVu Sans Mono",Menlo,monospace;font-size:12.5px}
pre{background:#f3f1ec;border:1px solid var(--rule);border-radius:4px;padding:10px 12px;overflow:auto;white-space:pre-wrap;word-break:break-word}
.brand{font:600 11px/1 ui-monospace,"DejaVu Sans Mono",monospace;letter-spacing:.14em;text-transform:uppercase;color:var(--muted)}
.sub{color:var(--muted);margin:0 0 14px}
.verdict{display:grid;grid-template-columns:auto 1fr;gap:4px 18px;align-items:center;background:var(--card);border:1px solid var(--rule);border-left:8px solid var(--v);border-radius:6px;padding:14px 18px;margin:14px 0 18px}
.verdict .word{font:800 22px/1.1 system-ui,sans-serif;letter-spacing:.06em;text-transform:uppercase;color:var(--v)}
.verdict .reason{font-size:15px}
.verdict.decoupled{--v:var(--decoupled)}.verdict.aligned{--v:var(--aligned)}.verdict.inconclusive{--v:var(--inconclusive)}.verdict.mixed{--v:var(--inconclusive)}
.verdict .glyph{font-size:13px;color:var(--muted)}
.facts{display:flex;flex-wrap:wrap;gap:10px;margin:0 0 22px;padding:0;list-style:none}
.facts li{background:var(--card);border:1px solid var(--rule);border-radius:6px;padding:8px 12px;min-width:120px}
.facts b{display:block;font-size:19px;font-variant-numeric:tabular-nums}
.facts span{font-size:12px;color:var(--muted)}
section{background:var(--card);border:1px solid var(--rule);border-radius:8px;padding:18px 20px;margin:0 0 18px}
figure.chart{margin:8px 0 4px;overflow-x:auto}
figure.chart svg{max-width:100%;height:auto;display:block}
figcaption{font-size:12.5px;color:var(--muted);margin-top:4px}
.key{display:inline-flex;align-items:center;gap:6px;margin-right:14px;font-size:12.5px}
.swatch{display:inline-block;width:22px;height:0;border-top:3px solid var(--c)}
.swatch.dash{border-top-style:dashed}
.cross{display:inline-block;width:22px;text-align:center;font-weight:700}
ol.alerts{list-style:none;margin:10px 0 0;padding:0;counter-reset:none}
ol.alerts li{display:grid;grid-template-columns:34px 150px 1fr;gap:4px 10px;padding:7px 0;border-top:1px solid var(--rule);align-items:baseline}
ol.alerts .tag{font:700 12px/1 ui-monospace,monospace;color:#fff;background:var(--alert);border-radius:10px;padding:4px 0;text-align:center}
ol.alerts .kind{font-weight:600}
ol.alerts .step{color:var(--muted);font-size:12.5px;display:block;font-weight:400}
.none{color:var(--muted);font-style:italic}
table.data{border-collapse:collapse;width:100%;font-size:13px;font-variant-numeric:tabular-nums}
table.data th{text-align:left;font-weight:600;color:var(--muted);border-bottom:2px solid var(--rule);padding:5px 8px;white-space:nowrap}
table.data td{border-bottom:1px solid var(--rule);padding:5px 8px;vertical-align:top}
table.data td.num,table.data th.num{text-align:right}
.pill{display:inline-block;border-radius:10px;padding:1px 8px;font-size:12px;font-weight:600;border:1px solid currentColor}
.pill.decoupled,.pill.critical{color:var(--decoupled)}.pill.aligned,.pill.info{color:var(--aligned)}.pill.inconclusive{color:var(--inconclusive)}.pill.warning{color:#8a6a00}
.finding{border-top:1px solid var(--rule);padding:10px 0}
.finding:first-of-type{border-top:0}
.finding .msg{margin:4px 0 6px}
ul.ev{margin:4px 0 6px 18px;padding:0;font-size:12.5px;color:var(--muted)}ul.ev li{margin:1px 0}
dl.ev{display:grid;grid-template-columns:max-content 1fr;gap:2px 12px;margin:4px 0;font-size:12.5px}
dl.ev dt{color:var(--muted)}dl.ev dd{margin:0;word-break:break-word}
.drawing{display:flex;gap:18px;flex-wrap:wrap;align-items:flex-start;margin:8px 0}
.drawing svg{max-width:100%;height:auto}
.legend{font-size:12px;color:var(--muted);max-width:340px}
.legend div{margin:2px 0}
.caution{border:1px solid #e5c68a;background:#fff8e8;border-radius:8px;padding:14px 18px;margin:0 0 18px}
.caution b{display:block;margin-bottom:4px}
details summary{cursor:pointer;color:var(--muted);font-size:13px}
footer{color:var(--muted);font-size:12px;margin-top:26px;border-top:1px solid var(--rule);padding-top:10px}
@media print{
  @page{size:auto;margin:14mm}
  html{background:#fff;font-size:11pt}
  body{max-width:none;padding:0}
  section,.verdict,.facts li,.caution{box-shadow:none;break-inside:avoid;page-break-inside:avoid;border-color:#999}
  figure.chart,.drawing,table.data tr{break-inside:avoid;page-break-inside:avoid}
  section{border:0;border-top:1px solid #999;border-radius:0;padding:10px 0}
  .verdict{border:1px solid #999;border-left:6px solid var(--v)}
  .caution{background:#fff}
  details{display:block}details>*{display:block}
  pre{white-space:pre-wrap;background:#fff}
  a{color:inherit;text-decoration:none}
}
`;

export interface PageParts {
  title: string;
  /** Already-escaped HTML of the body. */
  body: string;
  /** Data embedded as JSON for machine readers (escaped for a script block). */
  data?: unknown;
}

/** The whole document. `title` is escaped here; `body` must already be safe HTML. */
export function page(parts: PageParts): string {
  const data = parts.data === undefined ? "" : `\n<script type="application/json" id="gapwatch-data">${jsonForScript(parts.data)}</script>`;
  return `<!doctype html>
<html lang="en">
<head>
<meta charset="utf-8">
<meta name="viewport" content="width=device-width, initial-scale=1">
<meta http-equiv="Content-Security-Policy" content="default-src 'none'; style-src 'unsafe-inline'; img-src data:">
<meta name="generator" content="gapwatch">
<title>${esc(parts.title)}</title>
<style>${CSS}</style>
</head>
<body>
${parts.body}${data}
</body>
</html>
`;
}
