/** The sizes `npm run bench -- --size <name>` knows; `tiny` is for the harness's own test. */
export const SIZE_NAMES = ['tiny', 'small', 'medium', 'large'] as const;
export type SizeName = (typeof SIZE_NAMES)[number];

export interface ScenarioSize {
  name: SizeName;
  securities: number;
  portfolios: number;
  holdingsPerPortfolio: number;
  /** Business days (Monday to Friday) of history in the big files. */
  historyDays: number;
  /** New business days after the history, dropped one at a time for the latency figure. */
  newDays: number;
  windows: number[];
  /** Daily corrections in a row for the history-growth figure (a year of business days at the real sizes). */
  correctionDays: number;
  /** How many times ingest and backfill are repeated; the median is reported. */
  runs: number;
}

// 261 business days a year (52 weeks and a day); holidays are left out on purpose so
// every valuation date has every price
export const YEAR = 261;

export const SIZES: Record<SizeName, ScenarioSize> = {
  tiny: { name: 'tiny', securities: 12, portfolios: 2, holdingsPerPortfolio: 6, historyDays: 70, newDays: 2, windows: [21, 63], correctionDays: 3, runs: 1 },
  small: {
    name: 'small',
    securities: 100,
    portfolios: 5,
    holdingsPerPortfolio: 40,
    historyDays: 3 * YEAR,
    newDays: 5,
    windows: [21, 63, 252],
    correctionDays: YEAR,
    runs: 3,
  },
  medium: {
    name: 'medium',
    securities: 500,
    portfolios: 20,
    holdingsPerPortfolio: 100,
    historyDays: 5 * YEAR,
    newDays: 5,
    windows: [21, 63, 252],
    correctionDays: YEAR,
    runs: 1,
  },
  large: {
    name: 'large',
    securities: 1000,
    portfolios: 50,
    holdingsPerPortfolio: 200,
    historyDays: 10 * YEAR,
    newDays: 5,
    windows: [21, 63, 252],
    correctionDays: YEAR,
    runs: 3,
  },
};

/** Above it, the naive-versus-incremental comparison runs at this size: the naive way is too slow for more. */
export const NAIVE_SIZE: SizeName = 'small';
