import type { Logger } from 'pino';
import { readColumns } from '../../src/storage/columnar.ts';
import { quadraticForm, sampleCovariance } from '../../src/risk/math/covariance.ts';
import { openWorkspace } from '../../src/storage/workspace.ts';
import type { Database } from '../../src/storage/database.ts';
import { figure, type Figure } from '../figures.ts';
import { median, timed } from '../measure.ts';
import type { SizeName } from '../scenario.ts';
import type { BenchWorkspace } from '../workspace.ts';

/**
 * The straightforward way: for every portfolio, date and
 * window, cut the window's returns of the securities held, build their covariance from
 * scratch with `sampleCovariance`, then sqrt(A w'Sw). Same views in, only the sample
 * `vol_ex_ante` out (no contributions, VaR, EWMA or writes), so the ratio to the real
 * backfill understates what the incremental algorithm buys. Its figures are also
 * compared with the backfill's risk_daily, as a check that both agree.
 */
export async function measureNaive(
  ws: BenchWorkspace,
  size: SizeName,
  incremental: { seconds: number[]; computeSeconds: number | null },
  runs: number,
  log: Logger,
): Promise<Figure> {
  const db = await openWorkspace(ws.config, log);
  try {
    const seconds: number[] = [];
    const readSeconds: number[] = [];
    let vols = new Map<string, number>();
    for (let run = 0; run < runs; run++) {
      const read = await timed(() => readNaiveInputs(db));
      const compute = await timed(async () => naiveVolatilities(read.value, ws.config.risk.windows, ws.config.risk.tradingDaysPerYear));
      readSeconds.push(read.seconds);
      seconds.push(read.seconds + compute.seconds);
      vols = compute.value;
    }
    const agreement = await compareWithRiskDaily(db, vols);
    const incrementalSeconds = median(incremental.seconds);
    const naiveCompute = median(seconds) - median(readSeconds);
    return figure(
      'naive_vs_incremental',
      size,
      seconds.map((s) => s / incrementalSeconds),
      {
        note: `${size} scenario; naive computes only sample vol_ex_ante, the backfill everything`,
        details: {
          naive_seconds: median(seconds),
          naive_read_seconds: median(readSeconds),
          incremental_seconds: incrementalSeconds,
          // the estimates alone on both sides: what the incremental algorithm itself buys
          compute_only_ratio: incremental.computeSeconds ? naiveCompute / incremental.computeSeconds : null,
          figures_compared: agreement.compared,
          max_abs_difference: agreement.maxAbsDifference,
        },
      },
    );
  } finally {
    db.close();
  }
}

interface NaiveInputs {
  /** Dense (dates + 1) x securities log returns by date_index; a return that does not exist is NaN. */
  matrix: Float64Array;
  securityIndex: Map<string, number>;
  weights: Awaited<ReturnType<typeof readWeights>>;
}

async function readNaiveInputs(db: Database): Promise<NaiveInputs> {
  const returns = await readColumns(
    db,
    'select security_id, date_index, log_return from ret_securities',
    undefined,
    { security_id: 'text', date_index: 'int', log_return: 'double' },
  );
  const securityIndex = new Map<string, number>();
  let dates = 0;
  for (let r = 0; r < returns.rows; r++) {
    const id = returns.columns.security_id[r]!;
    if (!securityIndex.has(id)) securityIndex.set(id, securityIndex.size);
    dates = Math.max(dates, returns.columns.date_index[r]);
  }
  const n = securityIndex.size;
  const matrix = new Float64Array((dates + 1) * n).fill(Number.NaN);
  for (let r = 0; r < returns.rows; r++) {
    matrix[returns.columns.date_index[r] * n + securityIndex.get(returns.columns.security_id[r]!)!] = returns.columns.log_return[r];
  }
  return { matrix, securityIndex, weights: await readWeights(db) };
}

/** Non-cash holdings by portfolio and date, ordered so each (portfolio, date) is one run of rows. */
function readWeights(db: Database) {
  return readColumns(
    db,
    `select w.portfolio_id, d.date_index, w.security_id, w.weight
     from value_weights w join align_valuation_dates d using (date)
     where not w.is_cash and w.weight <> 0
     order by w.portfolio_id, d.date_index`,
    undefined,
    { portfolio_id: 'text', date_index: 'int', security_id: 'text', weight: 'double' },
  );
}

/** vol_ex_ante by "portfolio|date_index|window", from scratch for each; a missing return voids its window. */
function naiveVolatilities(inputs: NaiveInputs, windows: readonly number[], periodsPerYear: number): Map<string, number> {
  const { matrix, securityIndex, weights } = inputs;
  const n = securityIndex.size;
  const out = new Map<string, number>();
  const { portfolio_id: portfolio, date_index: dateIndex, security_id: security, weight } = weights.columns;
  for (let start = 0; start < weights.rows; ) {
    let end = start;
    while (end < weights.rows && portfolio[end] === portfolio[start] && dateIndex[end] === dateIndex[start]) end++;
    const k = end - start;
    const columns = new Int32Array(k);
    const w = new Float64Array(k);
    let known = true;
    for (let a = 0; a < k; a++) {
      const s = securityIndex.get(security[start + a]!);
      if (s === undefined) known = false;
      columns[a] = s ?? 0;
      w[a] = weight[start + a];
    }
    const t = dateIndex[start];
    for (const window of windows) {
      const first = t - window + 1;
      if (!known || first < 1) continue;
      const x = new Float64Array(window * k);
      for (let row = 0; row < window; row++) {
        for (let a = 0; a < k; a++) x[row * k + a] = matrix[(first + row) * n + columns[a]];
      }
      const variance = quadraticForm(sampleCovariance(x, window, k), k, w);
      if (Number.isFinite(variance)) out.set(`${portfolio[start]}|${t}|${window}`, Math.sqrt(periodsPerYear * variance));
    }
    start = end;
  }
  return out;
}

async function compareWithRiskDaily(db: Database, naive: Map<string, number>): Promise<{ compared: number; maxAbsDifference: number | null }> {
  const rows = await readColumns(
    db,
    `select r.portfolio_id, d.date_index, r.window_days, r.vol_ex_ante
     from risk_daily r join align_valuation_dates d using (date)
     where r.estimator = 'sample' and r.vol_ex_ante is not null`,
    undefined,
    { portfolio_id: 'text', date_index: 'int', window_days: 'int', vol_ex_ante: 'double' },
  );
  let compared = 0;
  let maxAbsDifference: number | null = null;
  for (let r = 0; r < rows.rows; r++) {
    const c = rows.columns;
    const mine = naive.get(`${c.portfolio_id[r]}|${c.date_index[r]}|${c.window_days[r]}`);
    if (mine === undefined) continue;
    compared++;
    maxAbsDifference = Math.max(maxAbsDifference ?? 0, Math.abs(mine - c.vol_ex_ante[r]));
  }
  return { compared, maxAbsDifference };
}
