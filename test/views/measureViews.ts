// Times the derived-table rebuild, then `select count(*)` over the views the risk stage
// reads in bulk, on the full-size invented scenario (built inside DuckDB, in a temp folder
// removed afterwards), and the risk stage's one-day reads (date_index past the last but one).
// Run: npx tsx test/views/measureViews.ts [fraction-of-ten-years]
import { loadavg } from 'node:os';
import { refreshDerived } from '../../src/storage/derived.ts';
import { openTestWorkspace } from './workspace.ts';
import { FULL_SIZE, generateLargeScenario } from './largeScenario.ts';

const fraction = Number(process.argv[2] ?? 1);
const size = { ...FULL_SIZE, businessDays: Math.round(FULL_SIZE.businessDays * fraction) };
const ws = await openTestWorkspace({ risk: { windows: [21, 63, 252] } });
const seconds = (since: number) => ((performance.now() - since) / 1000).toFixed(1);
const load = () => `(load average ${loadavg()[0].toFixed(1)})`;
async function timeCount(label: string, sql: string): Promise<void> {
  const started = performance.now();
  const [row] = await ws.db.all<{ n: string }>(`select count(*)::varchar as n from (${sql})`);
  console.log(`${label.padEnd(34)} ${row.n.padStart(10)} rows  ${seconds(started).padStart(6)} s  ${load()}`);
}
try {
  let started = performance.now();
  await generateLargeScenario(ws.db, size);
  console.log(`generated ${JSON.stringify(size)} in ${seconds(started)} s`);
  started = performance.now();
  await refreshDerived(ws.db);
  console.log(`derived tables rebuilt in ${seconds(started)} s ${load()}`);
  for (const view of ['align_valuation_dates', 'value_positions', 'value_weights', 'ret_securities', 'ret_portfolios']) {
    await timeCount(view, `select * from ${view}`);
  }
  const [{ last }] = await ws.db.all<{ last: number }>('select max(date_index) as last from align_valuation_dates');
  for (const view of ['value_weights', 'ret_portfolios']) {
    await timeCount(`${view} date_index > ${last - 1}`, `select * from ${view} where date_index > ${last - 1}`);
  }
} finally {
  ws.close();
}
