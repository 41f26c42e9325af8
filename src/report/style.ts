import { INK, MUTED, GRID } from './svg/palette.js';

/** The page's only stylesheet, inlined: readable printed, in greyscale, and without scripts. */
export const STYLE = `
:root{color:${INK};background:#fbfbf9;font:15px/1.45 system-ui,-apple-system,"Segoe UI",Roboto,"Noto Sans",sans-serif}
body{margin:0 auto;max-width:1000px;padding:24px 20px 60px}
h1{font-size:1.6em;margin:0 0 2px}h2{font-size:1.3em;margin:36px 0 8px;padding-top:10px;border-top:2px solid ${INK}}
h3{font-size:1.05em;margin:22px 0 6px}
.sub{color:${MUTED};margin:0 0 18px}
dl.facts{display:grid;grid-template-columns:max-content 1fr;gap:2px 16px;margin:8px 0 14px}
dl.facts dt{color:${MUTED}}dl.facts dd{margin:0}
table{border-collapse:collapse;margin:6px 0 14px;font-variant-numeric:tabular-nums}
th,td{border-bottom:1px solid ${GRID};padding:3px 10px 3px 0;text-align:left;vertical-align:top}
th{font-weight:600;border-bottom:1.5px solid ${INK}}
td.n,th.n{text-align:right}
.sev{display:inline-block;padding:0 6px;border-radius:3px;font-size:.85em;font-weight:600;border:1px solid ${INK}}
.sev-low{border-style:dotted;font-weight:400}.sev-medium{border-style:dashed}
.sev-high{border-width:2px}.sev-critical{background:${INK};color:#fff}
.explain{font-size:1.05em;margin:6px 0 10px;padding:8px 12px;border-left:4px solid ${INK};background:#f0f2f3}
.evidence{display:flex;flex-wrap:wrap;align-items:flex-start;gap:0 36px}
.note{padding:8px 12px;border:1px dashed ${MUTED};margin:10px 0}
figure{margin:10px 0 18px}figcaption{color:${MUTED};font-size:.9em}
svg{max-width:100%;height:auto;font:11px system-ui,-apple-system,"Segoe UI",Roboto,"Noto Sans",sans-serif;fill:${INK}}
svg .bar-label{font-size:10px;fill:#fff;paint-order:stroke;stroke:${INK};stroke-width:2.4px}
nav ul{columns:3;padding-left:18px}
.mono{font-family:ui-monospace,"DejaVu Sans Mono",monospace;font-size:.92em}
footer{margin-top:40px;color:${MUTED};font-size:.9em}
`;
