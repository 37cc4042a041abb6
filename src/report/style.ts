/**
 * The report's palette and layout: warm paper, dark ink, a few muted accents. Charts
 * take their colours from PALETTE; the stylesheet below is inlined into the page.
 */
export const PALETTE = {
  ink: '#22282c',
  muted: '#5d6a70',
  rule: '#d8d4cb',
  windows: ['#7a9a3a', '#1d5f73', '#8a5a2b', '#4f6d8f'],
  ewma: '#6d4c7d',
  exAnte: '#1d5f73',
  realized: '#b0683a',
  limit: '#a23b2a',
  warning: '#c0831a',
  breachBand: 'rgba(162, 59, 42, 0.14)',
  warningBand: 'rgba(192, 131, 26, 0.16)',
  barUp: '#1d5f73',
  barDown: '#7a9a3a',
  rebalance: '#5d6a70',
} as const;

export const STYLESHEET = `
:root { color-scheme: light; }
* { box-sizing: border-box; }
body { margin: 0; background: #f4f2ec; color: ${PALETTE.ink};
  font: 14px/1.45 "Segoe UI", "Helvetica Neue", "Liberation Sans", Arial, sans-serif; }
main { max-width: 980px; margin: 0 auto; padding: 28px 32px 40px; background: #fdfcf9; border-left: 1px solid ${PALETTE.rule}; border-right: 1px solid ${PALETTE.rule}; }
header.masthead { border-bottom: 2px solid ${PALETTE.ink}; padding-bottom: 12px; margin-bottom: 20px; }
.eyebrow { text-transform: uppercase; letter-spacing: 0.12em; font-size: 11px; color: ${PALETTE.muted}; margin: 0; }
h1 { font-size: 26px; margin: 2px 0 4px; font-weight: 600; }
.subtitle { color: ${PALETTE.muted}; margin: 0; }
h2 { font-size: 16px; margin: 0 0 4px; font-weight: 600; }
.wide { overflow-x: auto; }
table.firm td.num, table.firm td.date { white-space: nowrap; }
h3 { font-size: 13px; margin: 12px 0 4px; font-weight: 600; }
section { margin: 26px 0; break-inside: avoid; page-break-inside: avoid; }
section > .lede { color: ${PALETTE.muted}; margin: 0 0 10px; font-size: 13px; }
.figures { display: grid; grid-template-columns: repeat(auto-fit, minmax(150px, 1fr)); gap: 0; border: 1px solid ${PALETTE.rule}; }
.figure { padding: 10px 14px; border-right: 1px solid ${PALETTE.rule}; }
.figure:last-child { border-right: none; }
.figure .label { font-size: 11px; text-transform: uppercase; letter-spacing: 0.08em; color: ${PALETTE.muted}; }
.figure .value { font-size: 20px; font-variant-numeric: tabular-nums; }
.figure .note { font-size: 12px; color: ${PALETTE.muted}; }
.chip { display: inline-block; padding: 1px 8px; border-radius: 3px; font-size: 12px; font-weight: 600; border: 1px solid currentColor; }
.chip-ok { color: #3d6b35; }
.chip-warning { color: ${PALETTE.warning}; }
.chip-breach { color: ${PALETTE.limit}; }
svg.chart { display: block; width: 100%; height: auto; margin: 4px 0; }
svg.chart text { font-family: inherit; }
svg .grid { stroke: #e6e2d9; stroke-width: 1; }
svg .axis { stroke: ${PALETTE.muted}; stroke-width: 1; }
svg .tick { font-size: 11px; fill: ${PALETTE.muted}; }
svg .series { stroke-width: 1.6; stroke-linejoin: round; stroke-linecap: round; }
svg .reference { stroke-width: 1.2; }
svg .marker { stroke-width: 2; }
svg .reference-label { font-size: 11px; font-weight: 600; }
svg .bar-label { font-size: 12px; fill: ${PALETTE.ink}; }
svg .bar-detail { fill: ${PALETTE.muted}; font-size: 11px; }
svg .bar-value { font-size: 11px; fill: ${PALETTE.ink}; font-variant-numeric: tabular-nums; }
svg .cell-value { font-size: 11px; font-variant-numeric: tabular-nums; }
svg .empty-note { font-size: 13px; fill: ${PALETTE.muted}; }
.legend { display: flex; flex-wrap: wrap; gap: 4px 18px; font-size: 12px; color: ${PALETTE.muted}; }
.legend-item { display: inline-flex; align-items: center; gap: 6px; }
.swatch { display: inline-block; width: 22px; height: 0; border-top: 2px solid var(--swatch); }
.swatch-dashed { border-top-style: dashed; }
.swatch-band { height: 11px; border: none; background: var(--swatch); }
.swatch-tick { width: 0; height: 12px; border-top: none; border-left: 2px solid var(--swatch); }
table { border-collapse: collapse; width: 100%; font-size: 13px; }
th, td { text-align: left; padding: 5px 8px; border-bottom: 1px solid ${PALETTE.rule}; vertical-align: top; }
th { font-size: 11px; text-transform: uppercase; letter-spacing: 0.06em; color: ${PALETTE.muted}; font-weight: 600; }
td.num, th.num { text-align: right; font-variant-numeric: tabular-nums; }
.quiet { color: ${PALETTE.muted}; }
.cautions { border-left: 3px solid ${PALETTE.warning}; padding: 8px 14px; background: #faf5ea; }
.cautions ul { margin: 4px 0; padding-left: 18px; }
footer { margin-top: 30px; padding-top: 10px; border-top: 1px solid ${PALETTE.rule}; font-size: 12px; color: ${PALETTE.muted}; }
footer dl { display: grid; grid-template-columns: max-content 1fr; gap: 2px 14px; margin: 0; }
footer dt { font-weight: 600; }
footer dd { margin: 0; font-family: ui-monospace, "DejaVu Sans Mono", monospace; word-break: break-all; }
@media print {
  @page { size: A4; margin: 14mm 12mm; }
  body { background: #ffffff; font-size: 11px; }
  main { max-width: none; padding: 0; border: none; background: #ffffff; }
  .cautions { background: #ffffff; }
  section.page-start { break-before: page; page-break-before: always; }
  .figures { grid-template-columns: repeat(4, 1fr); }
  /* swatches and chips are CSS backgrounds, which browsers leave out of print unless told */
  .swatch, .chip, .cautions { -webkit-print-color-adjust: exact; print-color-adjust: exact; }
  svg.chart { max-height: 240px; }
  svg.heatmap { max-height: none; }
  thead { display: table-header-group; }
  tr { break-inside: avoid; page-break-inside: avoid; }
}
`;
