// Times `select count(*)` over the views the risk stage reads in bulk, on the full-size
// invented scenario. Run: npx tsx test/views/measureViews.ts [fraction-of-full-size]
import { openTestWorkspace } from './workspace.ts';
import { FULL_SIZE, generateLargeScenario } from './largeScenario.ts';

const fraction = Number(process.argv[2] ?? 1);
const size = {
  ...FULL_SIZE,
  businessDays: Math.round(FULL_SIZE.businessDays * fraction),
};
const ws = await openTestWorkspace({ risk: { windows: [21, 63, 252] } });
try {
  let started = performance.now();
  await generateLargeScenario(ws.db, size);
  console.log(`generated ${JSON.stringify(size)} in ${((performance.now() - started) / 1000).toFixed(1)} s`);
  for (const view of ['positions', 'clean_positions', 'align_valuation_dates', 'align_prices', 'hold_daily_positions', 'value_positions', 'value_weights', 'ret_securities', 'ret_portfolios', 'check_data_quality']) {
    started = performance.now();
    const [row] = await ws.db.all<{ n: string }>(`select count(*)::varchar as n from ${view}`);
    console.log(`${view.padEnd(24)} ${row.n.padStart(10)} rows  ${((performance.now() - started) / 1000).toFixed(2)} s`);
  }
} finally {
  ws.close();
}
