import type { Database } from '../storage/database.ts';
import { DEMO_LIMIT_WINDOW } from './demoConfig.ts';

/** The demo's price correction shown both ways: the figures as reported before it arrived, and as known now. */
export interface CorrectionBothWays {
  file: string;
  /** The corrected date. */
  date: string;
  /** The query of the figures as reported before the correction arrived (risk_daily_asof at its arrival). */
  asReported: string;
  /** The query of the figures as known now (risk_daily). */
  asKnown: string;
  rows: {
    portfolio_id: string;
    as_reported: number | null;
    reported_status: string | null;
    as_known: number | null;
    known_status: string | null;
  }[];
}

const FIGURE = `window_days = ${DEMO_LIMIT_WINDOW} and estimator = 'sample'`;

/** The two queries, as printed (so a reader can run them with `riskfold sql`) and as run here. */
export function correctionQueries(file: string, date: string): Pick<CorrectionBothWays, 'asReported' | 'asKnown'> {
  const arrival = `(select received_at from ingested_files where name = '${file}')`;
  return {
    asReported: `select portfolio_id, vol_ex_ante, status from risk_daily_asof(${arrival}) where date = '${date}' and ${FIGURE} order by portfolio_id`,
    asKnown: `select portfolio_id, vol_ex_ante, status from risk_daily where date = '${date}' and ${FIGURE} order by portfolio_id`,
  };
}

/** Reads both ways for the first delivery that corrected earlier prices; null when there was none. */
export async function readCorrectionBothWays(db: Database, file: string | undefined): Promise<CorrectionBothWays | null> {
  if (file === undefined) return null;
  const [{ date }] = await db.all<{ date: string }>(
    'select min(date)::varchar as date from prices join ingested_files using (file_id) where name = $1',
    [file],
  );
  const queries = correctionQueries(file, date);
  type Figure = { portfolio_id: string; vol_ex_ante: number | null; status: string };
  const before = await db.all<Figure>(queries.asReported);
  const now = await db.all<Figure>(queries.asKnown);
  const ids = [...new Set([...before, ...now].map((r) => r.portfolio_id))].sort();
  const rows = ids.map((id) => {
    const [b, n] = [before.find((r) => r.portfolio_id === id), now.find((r) => r.portfolio_id === id)];
    return {
      portfolio_id: id,
      as_reported: b?.vol_ex_ante ?? null,
      reported_status: b?.status ?? null,
      as_known: n?.vol_ex_ante ?? null,
      known_status: n?.status ?? null,
    };
  });
  return { file, date, ...queries, rows };
}
