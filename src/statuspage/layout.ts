/**
 * The page shell shared by every page: document head, inline style sheet, top bar, and the
 * small pieces (status badge, error pages) used everywhere. No external asset of any kind:
 * the page must work offline and behind a firewall.
 */
import type { Status } from '../report/index.ts';
import { NOT_APPLICABLE, STATUS_STYLE } from './format.ts';
import { html, raw, type SafeHtml } from './html.ts';

export interface StatusPageResult {
  status: number;
  contentType: string;
  body: string;
  headers: Record<string, string>;
}

export const HTML_TYPE = 'text/html; charset=utf-8';

/**
 * The page loads nothing and runs no script; the policy says so, so even an escaping bug
 * could not run code. Inline styles are the page's only style source.
 */
export const CONTENT_SECURITY_POLICY = "default-src 'none'; style-src 'unsafe-inline'; img-src data:; form-action 'self'; base-uri 'none'; frame-ancestors 'none'";

const statusRules = (Object.keys(STATUS_STYLE) as Status[])
  .map((s) => `.s-${s}{color:${STATUS_STYLE[s].text};background:${STATUS_STYLE[s].background}}`)
  .join('');

const CSS = `
:root{color-scheme:light;--ink:#1d2733;--muted:#56606c;--line:#dfe4ea;--bg:#f3f5f7;--card:#fff;--link:#1b5a96}
*{box-sizing:border-box}
html{-webkit-text-size-adjust:100%}
body{margin:0;background:var(--bg);color:var(--ink);font:15px/1.5 system-ui,-apple-system,"Segoe UI",Roboto,"DejaVu Sans","Helvetica Neue",Arial,sans-serif}
a{color:var(--link);text-underline-offset:2px}
a:hover{color:#0d3d6b}
a:focus-visible{outline:3px solid #e69f00;outline-offset:2px}
.top{background:#1e2b38;color:#e8eef4;padding:0 28px;display:flex;align-items:center;gap:20px;min-height:52px;flex-wrap:wrap}
.top .brand{color:#fff;font-weight:700;font-size:1.05rem;letter-spacing:.03em;text-decoration:none}
.top .brand span{color:#9fb3c8;font-weight:400;margin-left:8px}
.top nav{margin-left:auto;display:flex;gap:18px}
.top nav a{color:#cfdbe7;text-decoration:none;font-size:.92rem}
.top nav a:hover{color:#fff;text-decoration:underline}
main{max-width:1320px;margin:0 auto;padding:24px 28px 56px}
.card{background:var(--card);border:1px solid var(--line);border-radius:10px;padding:18px 22px;margin:0 0 22px}
h1{font-size:1.55rem;line-height:1.25;margin:0 0 8px;display:flex;align-items:center;gap:14px;flex-wrap:wrap}
h2{font-size:1.12rem;margin:0 0 12px}
h3{font-size:.98rem;margin:0 0 6px}
p{margin:0 0 10px}
code,.mono{font-family:ui-monospace,"DejaVu Sans Mono",Menlo,Consolas,monospace;font-size:.88em}
.muted{color:var(--muted)}
.vh{position:absolute;width:1px;height:1px;overflow:hidden;clip:rect(0 0 0 0);white-space:nowrap}
.small{font-size:.86rem}
.crumbs{font-size:.9rem;margin:0 0 12px;color:var(--muted)}
.badge{display:inline-block;padding:2px 12px;border-radius:999px;font-weight:650;font-size:.95rem;line-height:1.6;border:1px solid currentColor;white-space:nowrap}
${statusRules}
.na{color:${NOT_APPLICABLE.text}}
.facts{display:flex;flex-wrap:wrap;gap:10px 28px;margin:10px 0 0;padding:0;list-style:none}
.facts li{min-width:120px}
.facts b{display:block;font-size:1.25rem;font-variant-numeric:tabular-nums}
.facts span{color:var(--muted);font-size:.85rem}
.row{display:flex;flex-wrap:wrap;align-items:center;gap:10px 18px;margin:0 0 12px}
.seg{display:inline-flex;border:1px solid #b9c3cd;border-radius:7px;overflow:hidden}
.seg a{padding:4px 14px;text-decoration:none;color:var(--ink);font-size:.9rem}
.seg a+a{border-left:1px solid #b9c3cd}
.seg a[aria-current]{background:#1e2b38;color:#fff}
.seg.slices{display:flex;flex-wrap:wrap;width:fit-content;max-width:100%;margin:0 0 12px}
.slice{font-size:.8rem;padding:0 6px;border:1px solid var(--line);border-radius:4px;font-weight:normal}
.dates{display:flex;flex-wrap:wrap;gap:6px;margin:0;padding:0;list-style:none}
.spacer{flex:1}
.dates a,.dates span{display:inline-block;padding:2px 9px;border:1px solid var(--line);border-radius:6px;font-size:.84rem;text-decoration:none;font-variant-numeric:tabular-nums}
.dates span[aria-current]{background:#1e2b38;color:#fff;border-color:#1e2b38}
form.pick{display:inline-flex;gap:6px;align-items:center;font-size:.88rem}
form.pick input{font:inherit;padding:2px 6px;border:1px solid #b9c3cd;border-radius:6px}
form.pick button{font:inherit;padding:2px 12px;border:1px solid #1e2b38;border-radius:6px;background:#1e2b38;color:#fff;cursor:pointer}
.scroll{overflow-x:auto}
table{border-collapse:collapse;width:100%;font-variant-numeric:tabular-nums}
th,td{padding:7px 10px;text-align:left;vertical-align:top;border-bottom:1px solid var(--line)}
thead th{font-size:.8rem;font-weight:650;color:var(--muted);vertical-align:bottom;background:#fafbfc;border-bottom:2px solid var(--line)}
tbody th{font-weight:600}
tbody tr:hover{background:#f8fafc}
td.num,th.num{text-align:right}
table.grid th,table.grid td{padding:6px 7px}
table.grid td.c{white-space:nowrap;font-size:.8rem;border-left:1px solid #f0f2f5}
table.grid td.c .alert{margin:3px 0 0;letter-spacing:.02em}
table.grid tbody th{white-space:normal;overflow-wrap:anywhere;min-width:9em}
table.grid td.c .v{display:block;color:var(--ink)}
td.c.s-ok{background:none}
table.grid td.c .r{display:block;color:var(--muted);font-size:.76rem}
.st{font-weight:600}
.alert{display:inline-block;margin-left:6px;padding:0 5px;border:1.5px solid currentColor;border-radius:4px;font-size:.68rem;font-weight:800;letter-spacing:.06em;text-transform:uppercase;vertical-align:1px}
.legend{display:flex;flex-wrap:wrap;gap:6px 18px;font-size:.84rem;color:var(--muted);margin:10px 0 0;padding:0;list-style:none}
.legend .pill{padding:0 7px;border-radius:4px}
.charts{display:grid;grid-template-columns:repeat(auto-fit,minmax(440px,1fr));gap:18px 26px}
figure{margin:0}
figcaption{font-size:.86rem;color:var(--muted);margin:4px 0 0}
svg.chart{display:block;width:100%;max-width:560px;height:auto;font:11px system-ui,"DejaVu Sans",sans-serif}
svg .tick{fill:#56606c;font-size:11px}
svg .thr-label{font-size:11px;font-weight:600}
svg .bin-label,svg .legend text{fill:#1d2733;font-size:11.5px}
svg .bar-value{fill:#3d4753;font-size:11px}
details{margin:8px 0 0;font-size:.88rem}
details summary{cursor:pointer;color:var(--link)}
details table{margin-top:6px;max-width:560px}
.findings{display:grid;gap:14px}
.finding{border:1px solid var(--line);border-left:6px solid #c5ced8;border-radius:8px;padding:12px 16px}
.finding.f-critical{border-left-color:${STATUS_STYLE.critical.mark}}
.finding.f-warn{border-left-color:${STATUS_STYLE.warn.mark}}
.finding.f-ok{border-left-color:${STATUS_STYLE.ok.mark}}
.finding h3{display:flex;flex-wrap:wrap;gap:8px 14px;align-items:center}
.finding .summary{margin:6px 0 2px}
.finding .small{margin:0 0 8px}
dl.ev{display:grid;grid-template-columns:max-content 1fr;gap:2px 18px;margin:0;font-size:.88rem}
dl.ev dt{color:var(--muted)}
dl.ev dd{margin:0;font-variant-numeric:tabular-nums;overflow-wrap:anywhere}
.twocol{display:grid;grid-template-columns:minmax(0,560px) minmax(0,1fr);gap:18px 32px;align-items:start}
@media (max-width:980px){.twocol{grid-template-columns:1fr}}
@media (max-width:1400px){main{padding:20px 16px 48px}.card{padding:16px 16px}}
footer{max-width:1320px;margin:0 auto;padding:0 28px 32px;color:var(--muted);font-size:.84rem}
`
  .trim()
  .replace(/\n/g, '');

export interface ShellOptions {
  /** Page name, first in the <title>. */
  heading: string;
  /** Deployment name from the caller (e.g. "search ranker, production"), shown beside the product name. */
  siteTitle: string | undefined;
  body: SafeHtml;
  status?: number;
  /** Overview link target (keeps the chosen date). */
  home?: string;
  /** JSON report link of the page's date, when there is one. */
  json?: string;
}

export function shell(o: ShellOptions): StatusPageResult {
  const home = o.home ?? '/';
  const doc = html`<!doctype html>
<html lang="en"><head><meta charset="utf-8"><meta name="viewport" content="width=device-width, initial-scale=1"><meta name="color-scheme" content="light"><link rel="icon" href="data:,"><title>${o.heading}${o.siteTitle === undefined ? '' : ` · ${o.siteTitle}`} · Plumbline</title><style>${raw(CSS)}</style></head>
<body><header class="top"><a class="brand" href="/">Plumbline${o.siteTitle === undefined ? null : html`<span>${o.siteTitle}</span>`}</a><nav aria-label="Site"><a href="${home}">Overview</a>${o.json === undefined ? null : html`<a href="${o.json}">JSON report</a>`}<a href="/metrics">Metrics</a></nav></header>
<main>${o.body}</main>
<footer>Plumbline status page · statuses are written out (${STATUS_STYLE.critical.symbol} critical, ${STATUS_STYLE.warn.symbol} warn, ${STATUS_STYLE.ok.symbol} ok, ${NOT_APPLICABLE.symbol} not checked); colour only repeats them.</footer>
</body></html>
`;
  return { status: o.status ?? 200, contentType: HTML_TYPE, body: doc.value, headers: { 'Content-Security-Policy': CONTENT_SECURITY_POLICY } };
}

/** "✖ critical" as a pill with its status colours. */
export function badge(status: Status, extra?: string): SafeHtml {
  const s = STATUS_STYLE[status];
  return html`<span class="badge s-${status}">${s.symbol} ${s.label}${extra === undefined ? '' : ` ${extra}`}</span>`;
}

/** A page that says what was not found and where to go instead. */
export function errorPage(siteTitle: string | undefined, status: number, heading: string, message: SafeHtml | string): StatusPageResult {
  return shell({
    heading,
    siteTitle,
    status,
    body: html`<section class="card"><h1>${heading}</h1><p>${message}</p><p><a href="/">Back to the overview of the latest run</a></p></section>`,
  });
}
