/**
 * The invented world of the demo: a wealth manager ("Fallowmere Private Wealth"), its
 * three accounts and the securities they hold. Every name and id is made up and is
 * meant to resemble no real security, issuer or firm.
 *
 * Correlations come from factor loadings (equity, rates, commodity, europe): the
 * matrix B B' with the diagonal topped up to 1 is a valid correlation matrix whenever
 * each row of B has norm below 1, which keeps the Cholesky step safe.
 */

export type AssetClass = 'equity' | 'bond' | 'commodity';

export interface DemoSecurity {
  id: string;
  name: string;
  assetClass: AssetClass;
  currency: 'USD' | 'EUR';
  startPrice: number;
  /** Annualized drift and volatility of the log price in calm markets. */
  drift: number;
  vol: number;
  /** Loadings on [equity, rates, commodity, europe] in calm markets. */
  loadings: [number, number, number, number];
}

export const FIRM_NAME = 'Fallowmere Private Wealth';
export const BASE_CURRENCY = 'USD';

const eq = (id: string, name: string, currency: 'USD' | 'EUR', startPrice: number, vol: number, equity: number): DemoSecurity => ({
  id,
  name,
  assetClass: 'equity',
  currency,
  startPrice,
  drift: 0.07,
  vol,
  loadings: [equity, -0.1, 0.05, currency === 'EUR' ? 0.35 : 0],
});

const bd = (id: string, name: string, currency: 'USD' | 'EUR', startPrice: number, vol: number, rates: number): DemoSecurity => ({
  id,
  name,
  assetClass: 'bond',
  currency,
  startPrice,
  drift: 0.025,
  vol,
  loadings: [-0.1, rates, 0, currency === 'EUR' ? 0.3 : 0],
});

export const SECURITIES: readonly DemoSecurity[] = [
  eq('EQ-BRAMBLEFORD', 'Brambleford Rail Holdings', 'USD', 64.2, 0.16, 0.62),
  eq('EQ-QUILLBECK', 'Quillbeck Biologics', 'USD', 118.5, 0.22, 0.5),
  eq('EQ-VELLANCE', 'Vellance Semiconductor Works', 'USD', 143.75, 0.21, 0.66),
  eq('EQ-OKENSHAW', 'Okenshaw Grocers', 'USD', 37.9, 0.12, 0.45),
  eq('EQ-HARROWDEN', 'Harrowden Cloud Systems', 'USD', 88.1, 0.2, 0.64),
  eq('EQ-LINNMARSH', 'Linnmarsh Water Utilities', 'USD', 52.35, 0.11, 0.42),
  eq('EQ-TALLOWBY', 'Tallowby Insurance Group', 'USD', 71.6, 0.15, 0.58),
  eq('EQ-NORDWIND', 'Nordwind Turbinenbau', 'EUR', 24.8, 0.19, 0.55),
  eq('EQ-CALDERWYN', 'Calderwyn Chemie', 'EUR', 96.4, 0.17, 0.57),
  eq('EQ-SORVIK', 'Sorvik Maritime', 'EUR', 15.65, 0.2, 0.52),
  eq('EQ-MIRENZA', 'Mirenza Moda', 'EUR', 42.3, 0.18, 0.5),
  bd('BD-KESTREL-28', 'Kestrel County 3.1% 2028', 'USD', 98.6, 0.035, 0.8),
  bd('BD-OSPREYVALE-31', 'Ospreyvale Power 4.0% 2031', 'USD', 101.2, 0.055, 0.78),
  bd('BD-PLOVERHAM-30', 'Ploverham Transit 3.4% 2030', 'USD', 97.3, 0.05, 0.82),
  bd('BD-GODWITFORD-29', 'Godwitford Water 2.9% 2029', 'USD', 95.9, 0.04, 0.76),
  bd('BD-HERONMERE-27', 'Heronmere Landesbank 2.6% 2027', 'EUR', 99.1, 0.03, 0.7),
  bd('BD-WAGTAIL-35', 'Wagtail Housing Finance 4.2% 2035', 'EUR', 102.4, 0.07, 0.74),
  {
    id: 'CM-EMBERSTONE',
    name: 'Emberstone Broad Commodity Fund',
    assetClass: 'commodity',
    currency: 'USD',
    startPrice: 41.2,
    drift: 0.03,
    vol: 0.18,
    loadings: [0.25, 0, 0.72, 0],
  },
  {
    id: 'CM-AURIVALE',
    name: 'Aurivale Precious Metals Fund',
    assetClass: 'commodity',
    currency: 'USD',
    startPrice: 27.05,
    drift: 0.02,
    vol: 0.15,
    loadings: [0.05, 0.2, 0.6, 0],
  },
];

/** The EUR -> USD rate joins the correlated draw as one more variable. */
export const FX_EUR = { startRate: 1.0842, vol: 0.07, loadings: [0.1, 0, 0, 0.4] as [number, number, number, number] };

export interface DemoAccount {
  id: string;
  mandate: string;
  startValue: number;
  /** 63-day ex-ante volatility limit of the mandate. */
  volLimit: number;
  /** Target weights by security id (cash as CASH:<CCY>); they add up to 1. */
  targets: Readonly<Record<string, number>>;
}

export const ACCOUNTS: readonly DemoAccount[] = [
  {
    id: 'fpw-growth',
    mandate: 'growth',
    startValue: 4_200_000,
    volLimit: 0.18,
    targets: {
      'EQ-BRAMBLEFORD': 0.1, 'EQ-QUILLBECK': 0.1, 'EQ-VELLANCE': 0.13, 'EQ-HARROWDEN': 0.13, 'EQ-TALLOWBY': 0.08,
      'EQ-NORDWIND': 0.09, 'EQ-CALDERWYN': 0.08, 'EQ-SORVIK': 0.07, 'EQ-MIRENZA': 0.07,
      'CM-EMBERSTONE': 0.08, 'BD-OSPREYVALE-31': 0.04, 'CASH:USD': 0.03,
    },
  },
  {
    id: 'fpw-balanced',
    mandate: 'balanced',
    startValue: 6_500_000,
    volLimit: 0.12,
    targets: {
      'EQ-BRAMBLEFORD': 0.06, 'EQ-VELLANCE': 0.06, 'EQ-OKENSHAW': 0.05, 'EQ-HARROWDEN': 0.06, 'EQ-LINNMARSH': 0.05,
      'EQ-TALLOWBY': 0.05, 'EQ-CALDERWYN': 0.05, 'EQ-NORDWIND': 0.04,
      'BD-KESTREL-28': 0.12, 'BD-OSPREYVALE-31': 0.1, 'BD-PLOVERHAM-30': 0.1, 'BD-HERONMERE-27': 0.06, 'BD-WAGTAIL-35': 0.06,
      'CM-EMBERSTONE': 0.03, 'CM-AURIVALE': 0.04, 'CASH:USD': 0.04, 'CASH:EUR': 0.03,
    },
  },
  {
    id: 'fpw-income',
    mandate: 'income',
    startValue: 2_800_000,
    volLimit: 0.07,
    targets: {
      'EQ-OKENSHAW': 0.06, 'EQ-LINNMARSH': 0.07, 'EQ-TALLOWBY': 0.04,
      'BD-KESTREL-28': 0.16, 'BD-OSPREYVALE-31': 0.14, 'BD-PLOVERHAM-30': 0.13, 'BD-GODWITFORD-29': 0.14,
      'BD-HERONMERE-27': 0.08, 'BD-WAGTAIL-35': 0.06, 'CM-AURIVALE': 0.04, 'CASH:USD': 0.08,
    },
  },
];

export interface DemoBenchmark {
  id: string;
  /** The account measured against it. */
  portfolioId: string;
  /** Policy weights by security id (cash as CASH:<CCY>); they add up to 1. */
  weights: Readonly<Record<string, number>>;
}

/**
 * The balanced mandate's policy mix, 55% equity, 38% bonds, 5% commodity, 2% cash. It
 * names two securities the account does not hold (EQ-QUILLBECK, BD-GODWITFORD-29), so
 * the tracking error also shows risk from what the account leaves out.
 */
export const BENCHMARKS: readonly DemoBenchmark[] = [
  {
    id: 'bm-balanced-policy',
    portfolioId: 'fpw-balanced',
    weights: {
      'EQ-BRAMBLEFORD': 0.08, 'EQ-QUILLBECK': 0.06, 'EQ-VELLANCE': 0.08, 'EQ-HARROWDEN': 0.07, 'EQ-LINNMARSH': 0.05,
      'EQ-TALLOWBY': 0.06, 'EQ-CALDERWYN': 0.08, 'EQ-NORDWIND': 0.07,
      'BD-KESTREL-28': 0.1, 'BD-OSPREYVALE-31': 0.08, 'BD-PLOVERHAM-30': 0.08, 'BD-GODWITFORD-29': 0.06, 'BD-HERONMERE-27': 0.06,
      'CM-EMBERSTONE': 0.05, 'CASH:USD': 0.02,
    },
  },
];
