import { toTable } from '../src/cli/format.ts';
import { formatNumber, type Figure } from './figures.ts';
import type { BenchResult } from './harness.ts';

/** The printed summary: machine, scenario, one row per figure, then what missed and why. */
export function formatResult(result: BenchResult): string {
  const m = result.machine;
  const s = result.scenario;
  const out: string[] = [
    `riskfold bench, size ${result.size}: ${s.securities} securities, ${s.portfolios} portfolios x ${s.holdingsPerPortfolio} holdings, ` +
      `${s.historyDays} business days (${s.firstDate} .. ${s.lastDate}), windows ${s.config.risk?.windows?.join('/')}, EWMA, shrunk ${s.config.risk?.shrunk?.windows?.join('/') || 'none'}`,
    `history rows: ${Object.entries(s.historyRows)
      .map(([kind, n]) => `${kind} ${n.toLocaleString('en-US')}`)
      .join(', ')}; generated in ${formatNumber(s.generateSeconds)} s`,
    `machine: ${m.cpuModel}, ${m.cores} cores, ${m.memoryGiB} GiB, ${m.os}, node ${m.node}, duckdb ${m.duckdb}, ${m.date}`,
    '',
  ];
  const table = toTable({
    columns: ['figure', 'value', 'goal', 'verdict'],
    rows: result.figures.map((f) => [f.label, valueText(f), goalText(f), f.verdict === 'no_goal' ? '' : f.verdict]),
  });
  // toTable ends with a row count, which says nothing here
  out.push(...table.trimEnd().split('\n').slice(0, -1), '');
  for (const f of result.figures) {
    const details = Object.entries(f.details)
      .map(([k, v]) => `${k}=${typeof v === 'number' ? formatNumber(v) : v}`)
      .join(', ');
    const runs = f.runs.length > 1 ? `runs: ${f.runs.map(formatNumber).join(', ')}` : '';
    const parts = [f.note, runs, details].filter(Boolean);
    if (parts.length) out.push(`${f.key}: ${parts.join('; ')}`);
  }
  out.push('');
  for (const line of result.missed) out.push(`GOAL MISSED ${line}`);
  const missing = result.figures.filter((f) => f.verdict === 'unavailable').length;
  if (missing) out.push(`${missing} of ${result.figures.length} figures could not be measured (see above)`);
  if (!result.missed.length && !missing) out.push('every goal set for this size was met');
  out.push(`total ${formatNumber(result.totalSeconds)} s`);
  return `${out.join('\n')}\n`;
}

function valueText(f: Figure): string {
  return f.value === null ? 'n/a' : `${formatNumber(f.value)} ${f.unit}`;
}

function goalText(f: Figure): string {
  if (!f.goal) return '';
  return `${f.goal.kind === 'min' ? '>=' : '<='} ${formatNumber(f.goal.value)} ${f.unit}`;
}
