import type { Config } from '../../config/load.ts';
import { streamColumns } from '../../storage/columnar.ts';
import type { Database } from '../../storage/database.ts';
import { readSlotSeries, shared, WeightRows } from './panels.ts';

/**
 * The benchmarks the portfolios in scope are measured against (config `benchmarks`),
 * read from the views in the layout of inputs.ts: benchmark k, date row d, slot
 * k * T + d; securities by their index j in risk_in_securities.
 */
export interface BenchmarkPanel {
  ids: string[];
  /** Per portfolio p of the PortfolioPanel: its benchmark k, or -1 without one. */
  ofPortfolio: Int32Array;
  /** B x T: the benchmark's log return (ret_benchmarks), NaN when unknown. */
  logReturn: Float64Array;
  /** CSR over slots: weights of slot s are offsets[s] .. offsets[s + 1] - 1, sorted by security. */
  offsets: Int32Array;
  security: Int32Array;
  weight: Float64Array;
}

/** The benchmark of a portfolio: its own entry, else the "*" entry, else none. */
export function benchmarkOf(config: Pick<Config, 'benchmarks'>, portfolioId: string): string | null {
  return config.benchmarks[portfolioId] ?? config.benchmarks['*'] ?? null;
}

/**
 * Reads the weights and returns of the benchmarks of `portfolioIds` (the PortfolioPanel's
 * ids, in its order) from date row `firstRow` on, and records in the temporary table
 * risk_in_portfolio_benchmarks which portfolio is measured against which benchmark
 * (staging writes it into risk_daily.benchmark_id).
 */
export async function readBenchmarkPanel(
  db: Database,
  config: Pick<Config, 'benchmarks'>,
  portfolioIds: readonly string[],
  dateCount: number,
  firstRow: number,
): Promise<BenchmarkPanel> {
  const pairs = portfolioIds.map((id) => ({ portfolio_id: id, benchmark_id: benchmarkOf(config, id) }));
  const ids = [...new Set(pairs.flatMap((p) => (p.benchmark_id === null ? [] : [p.benchmark_id])))].sort();
  const ofPortfolio = shared(Int32Array, portfolioIds.length).fill(-1);
  pairs.forEach((pair, p) => {
    if (pair.benchmark_id !== null) ofPortfolio[p] = ids.indexOf(pair.benchmark_id);
  });
  // pairs bound as JSON: DuckDB cannot type an empty JS list
  await db.run(
    `create or replace temp table risk_in_portfolio_benchmarks as
     select unnest(from_json($1, '[{"portfolio_id": "VARCHAR", "benchmark_id": "VARCHAR"}]'), recursive := true)`,
    [JSON.stringify(pairs.filter((p) => p.benchmark_id !== null))],
  );
  await db.run(
    `create or replace temp table risk_in_benchmarks as
     with given as (select from_json($1, '["VARCHAR"]') as ids)
     -- two unnests of one select run side by side: k is the id's place in \`ids\`
     select unnest(ids) as benchmark_id, unnest(range(len(ids)))::integer as k from given`,
    [JSON.stringify(ids)],
  );

  // no benchmark in use: nothing to read (the views would still be planned and scanned)
  if (ids.length === 0) {
    return { ids, ofPortfolio, logReturn: new Float64Array(0), offsets: new Int32Array(1), security: new Int32Array(0), weight: new Float64Array(0) };
  }
  const slots = ids.length * dateCount;
  const logReturn = await readSlotSeries(
    db,
    `select b.k, r.date_index, r.log_return::double
     from ret_benchmarks_since($1 + 1) r join risk_in_benchmarks b using (benchmark_id)`,
    firstRow,
    slots,
    dateCount,
  );

  const constituents = new WeightRows(1 << 12);
  const offsets = shared(Int32Array, slots + 1);
  await streamColumns(
    db,
    `select b.k, w.date_index, s.k as j, w.weight::double
     from hold_benchmark_weights_since($1 + 1) w
     join risk_in_benchmarks b using (benchmark_id)
     join risk_in_securities s using (security_id)
     order by b.k, w.date_index, j`,
    [firstRow],
    { k: 'int', date_index: 'int', j: 'int', weight: 'double' },
    (c, n) => {
      constituents.append(c.j, c.weight, n);
      for (let i = 0; i < n; i++) offsets[c.k[i] * dateCount + c.date_index[i]]++;
    },
  );
  for (let slot = 0; slot < slots; slot++) offsets[slot + 1] += offsets[slot];
  return { ids, ofPortfolio, logReturn, offsets, ...constituents.taken() };
}
