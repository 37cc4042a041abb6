import { describe, expect, it } from 'vitest';
import { SIZES } from '../../bench/scenario.ts';
import { growthPoints, scalingPoints } from '../../bench/sweeps.ts';

describe('bench sweeps', () => {
  it('grows only the history of one book', () => {
    expect(growthPoints('large', [3, 6, 10])).toEqual(
      [3, 6, 10].map((years) => ({ portfolios: SIZES.large.portfolios, holdingsPerPortfolio: SIZES.large.holdingsPerPortfolio, years })),
    );
  });

  it('the full grid is every combination of 10/50/200 portfolios, 50/200/500 holdings and 3/10 years', () => {
    const points = scalingPoints(true);
    expect(points).toHaveLength(18);
    expect(new Set(points.map((p) => `${p.portfolios}-${p.holdingsPerPortfolio}-${p.years}`)).size).toBe(18);
  });

  it('the reduced grid varies one axis at a time around 10 x 50 over 3 years, each point once', () => {
    expect(scalingPoints(false)).toEqual([
      { portfolios: 10, holdingsPerPortfolio: 50, years: 3 },
      { portfolios: 50, holdingsPerPortfolio: 50, years: 3 },
      { portfolios: 200, holdingsPerPortfolio: 50, years: 3 },
      { portfolios: 10, holdingsPerPortfolio: 200, years: 3 },
      { portfolios: 10, holdingsPerPortfolio: 500, years: 3 },
      { portfolios: 10, holdingsPerPortfolio: 50, years: 10 },
    ]);
  });
});
