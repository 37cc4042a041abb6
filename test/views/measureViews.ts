// Times `select count(*)` over the views the risk stage reads in bulk, on the full-size
// invented scenario (built inside DuckDB, in a temp folder removed afterwards).
// Run: npx tsx test/views/measureViews.ts [fraction-of-ten-years]
import { loadavg } from 'node:os';
import { openTestWorkspace } from './workspace.ts';
import { FULL_SIZE, generateLargeScenario } from './largeScenario.ts';

const fraction = Number(process.argv[2] ?? 1);
const size = { ...FULL_SIZE, businessDays: Math.round(FULL_SIZE.businessDays * fraction) };
const ws = await openTestWorkspace({ risk: { windows: [21, 63, 252] } });
const seconds = (since: number) => ((performance.now() - since) / 1000).toFixed(1);
try {
  let started = performance.now();
  await generateLargeScenario(ws.db, size);
  console.log(`generated ${JSON.stringify(size)} in ${seconds(started)} s`);
  for (const view of ['align_valuation_dates', 'value_positions', 'value_weights', 'ret_securities', 'ret_portfolios']) {
    started = performance.now();
    const [row] = await ws.db.all<{ n: string }>(`select count(*)::varchar as n from ${view}`);
    console.log(`${view.padEnd(22)} ${row.n.padStart(10)} rows  ${seconds(started).padStart(6)} s  (load average ${loadavg()[0].toFixed(1)})`);
  }
} finally {
  ws.close();
}
