import { execFile } from 'node:child_process';
import { createHash } from 'node:crypto';
import { existsSync, readFileSync } from 'node:fs';
import path from 'node:path';
import { promisify } from 'node:util';
import { sampleCorrelation } from 'simple-statistics';
import { afterEach, describe, expect, it } from 'vitest';
import { RiskfoldError } from '../../src/errors.ts';
import { CAUTIONS } from '../../src/report/cautions.ts';
import { escapeHtml, formatMoney, formatPercent } from '../../src/report/format.ts';
import { readStandings } from '../../src/read/portfolioStatus.ts';
import { loadReportData } from '../../src/report/reportData.ts';
import { renderReport } from '../../src/report/renderReport.ts';
import { refreshDerived } from '../../src/storage/derived.ts';
import { defaultReportName, writeReport } from '../../src/report/writeReport.ts';
import { tempWorkspace, type TempWorkspace } from '../helpers/workspace.ts';
import { FIXTURE_CONFIG, FIXTURE_LIMIT, FIXTURE_PORTFOLIO, fillReportFixture } from './fixture.ts';

const run = promisify(execFile);
const CLI = path.resolve(import.meta.dirname, '../../bin/riskfold.js');

describe('loadReportData', () => {
  let ws: TempWorkspace | undefined;
  afterEach(() => ws?.cleanup());

  it('reads the latest date, the applicable limit, the contributions and the episode of the portfolio', async () => {
    ws = await tempWorkspace(FIXTURE_CONFIG);
    const fixture = await fillReportFixture(ws.db);
    const data = await loadReportData(ws.db, ws.config, FIXTURE_PORTFOLIO);
    expect(data.asOf).toBe(fixture.asOf);
    expect(data.focusWindow).toBe(63);
    expect(data.limits.map((l) => l.limit)).toEqual([FIXTURE_LIMIT]);
    expect(data.contributions.date).toBe(fixture.asOf);
    expect(data.contributions.rows.map((r) => r.pct)).toEqual([0.34, 0.29, 0.22, 0.17, -0.02]);
    expect(data.contributions.rows[0].name).toBe('Brambleford Rail Holdings');
    expect(data.breaches).toHaveLength(1);
    expect(data.breaches[0]).toMatchObject({ level: 'breach', ...fixture.breach });
    expect(data.latest.map((r) => `${r.estimator}:${r.window_days}`)).toEqual(['sample:21', 'sample:63', 'sample:252', 'ewma:0']);
    expect(data.provenance.runId).toBe(7);
    const configHash = createHash('sha256').update(readFileSync(ws.config.configPath)).digest('hex').slice(0, 12);
    expect(data.provenance.configHash).toBe(configHash);
  });

  it('sets the volatility chip from the volatility limit only: an open backtest-zone episode of the same window leaves it "within limit"', async () => {
    ws = await tempWorkspace(FIXTURE_CONFIG);
    const fixture = await fillReportFixture(ws.db);
    await ws.db.run(
      `insert into limit_breaches (portfolio_id, metric, window_days, estimator, limit_value, warning_value, clear_value, level, opened_on, peak_value, peak_on, run_id)
       values ($1, 'backtest_zone', 63, 'sample', 10, 5, 5, 'warning', $2, 5, $2, 7)`,
      [FIXTURE_PORTFOLIO, fixture.asOf],
    );
    const html = renderReport(await loadReportData(ws.db, ws.config, FIXTURE_PORTFOLIO), new Date('2026-12-02T00:00:00Z'));
    expect(html).toContain('<span class="chip chip-ok">within limit</span>');
    expect(html).not.toContain('warning since');
  });

  it('dates an open breach from its escalation, as status does, and a warning from its opening', async () => {
    ws = await tempWorkspace(FIXTURE_CONFIG);
    const { breach } = await fillReportFixture(ws.db);
    const chip = async () => {
      const html = renderReport(await loadReportData(ws!.db, ws!.config, FIXTURE_PORTFOLIO), new Date('2026-12-02T00:00:00Z'));
      return html.match(/<span class="chip chip-(?:warning|breach)">([^<]*)<\/span>/)?.[1];
    };
    // the fixture's episode reopened: at warning from opened_on, in breach from escalated_on
    await ws.db.run('update limit_breaches set closed_on = null');
    expect(await chip()).toBe(`in breach since ${breach.escalated_on} (warning from ${breach.opened_on})`);
    const status = await readStandings(ws.db, ws.config, FIXTURE_PORTFOLIO);
    expect(status.standings[0].figures.find((f) => f?.series.metric === 'vol_ex_ante')?.since).toBe(breach.escalated_on);
    await ws.db.run("update limit_breaches set level = 'warning', escalated_on = null");
    expect(await chip()).toBe(`warning since ${breach.opened_on}`);
  });

  it('ranks the largest holdings by weight and correlates their last 63 base-currency log returns like simple-statistics does', async () => {
    ws = await tempWorkspace(FIXTURE_CONFIG);
    const fixture = await fillReportFixture(ws.db);
    const data = await loadReportData(ws.db, ws.config, FIXTURE_PORTFOLIO);
    if ('error' in data.correlation) throw new Error(data.correlation.error);
    // independent of the views: value = quantity * price * fx straight from the raw tables
    const valued = await ws.db.all<{ security_id: string }>(
      `select p.security_id from positions p
       join prices x on x.security_id = p.security_id and x.date = $1
       left join fx_rates f on f.currency = x.currency and f.date = $1
       where p.security_id not like 'CASH:%'
       order by p.quantity * x.price * coalesce(f.rate, 1) desc`,
      [fixture.asOf],
    );
    expect(data.correlation.ids).toEqual(valued.map((r) => r.security_id));
    const baseLogReturns = async (id: string) => {
      const rows = await ws!.db.all<{ v: number }>(
        `select x.price * coalesce(f.rate, 1) as v from prices x
         left join fx_rates f on f.currency = x.currency and f.date = x.date
         where x.security_id = $1 order by x.date desc limit 64`,
        [id],
      );
      const v = rows.map((r) => r.v).reverse();
      return v.slice(1).map((p, i) => Math.log(p / v[i]));
    };
    const ids = data.correlation.ids;
    const i = ids.indexOf('EQ-NORDWIND');
    const j = ids.indexOf('EQ-VELLANCE');
    expect(data.correlation.observations).toBe(63);
    expect(data.correlation.values[i][j]).toBeCloseTo(sampleCorrelation(await baseLogReturns('EQ-NORDWIND'), await baseLogReturns('EQ-VELLANCE')), 10);
  });

  it('refuses an unknown portfolio and lists the known ones', async () => {
    ws = await tempWorkspace(FIXTURE_CONFIG);
    await fillReportFixture(ws.db);
    const err = await loadReportData(ws.db, ws.config, 'acct-nowhere').catch((e: unknown) => e);
    expect(err).toBeInstanceOf(RiskfoldError);
    expect((err as RiskfoldError).kind).toBe('not_found');
    expect((err as Error).message).toMatch(/"acct-nowhere" is not in .* \(known: acct-growth\)/);
  });
});

describe('renderReport', () => {
  let ws: TempWorkspace | undefined;
  afterEach(() => ws?.cleanup());

  it('is one self-contained page: no script, no external stylesheet, image or font, and the cautions are in it', async () => {
    ws = await tempWorkspace(FIXTURE_CONFIG);
    const fixture = await fillReportFixture(ws.db);
    const html = renderReport(await loadReportData(ws.db, ws.config, FIXTURE_PORTFOLIO), new Date('2026-12-01T12:00:00Z'));
    expect(html).not.toMatch(/<script|<link|<img|<iframe|@import|url\(/i);
    // the only URLs are the SVG namespace declarations
    expect([...html.matchAll(/https?:\/\/[^\s"']+/g)].map((m) => m[0]).every((u) => u === 'http://www.w3.org/2000/svg')).toBe(true);
    for (const caution of CAUTIONS) expect(html).toContain(escapeHtml(caution));
    for (const chart of ['vol-ex-ante-63', 'vol-change', 'vol-realized', 'contributions', 'correlation']) expect(html).toContain(`data-chart="${chart}"`);
    expect(html).toContain(`<td>${fixture.breach.opened_on}</td>`);
    expect(html).toContain('2026-12-01T12:00:00.000Z');
  });
});

describe('the exposures and benchmark sections', () => {
  let ws: TempWorkspace | undefined;
  afterEach(() => ws?.cleanup());

  it('show the buckets and concentration the views hold on the report date, and no benchmark section without a benchmark', async () => {
    ws = await tempWorkspace(FIXTURE_CONFIG);
    const fixture = await fillReportFixture(ws.db);
    const data = await loadReportData(ws.db, ws.config, FIXTURE_PORTFOLIO);
    const stored = await ws.db.all<{ dimension: string; bucket: string; weight: number }>(
      'select dimension, bucket, weight from exposure_daily where portfolio_id = $1 and date = $2 order by dimension, bucket',
      [FIXTURE_PORTFOLIO, fixture.asOf],
    );
    expect(stored.filter((b) => b.dimension === 'asset_class').map((b) => b.bucket)).toEqual(['bond', 'cash', 'commodity', 'equity']);
    expect(stored.filter((b) => b.dimension === 'currency').map((b) => b.bucket)).toEqual(['EUR', 'USD']);
    expect(data.exposure.buckets).toHaveLength(stored.length);
    expect(data.exposure.concentration?.n_positions).toBe(6);
    expect(data.exposure.benchmark).toBeNull();
    const html = renderReport(data, new Date('2026-12-01T12:00:00Z'));
    expect(html).toContain('data-section="exposures"');
    for (const b of stored) expect(html).toContain(`<td class="num">${formatPercent(b.weight, 1)}</td>`);
    expect(html).not.toContain('data-section="benchmark"');
  });

  it('shows tracking error and beta by window and the largest active contributors when a benchmark is set', async () => {
    ws = await tempWorkspace(FIXTURE_CONFIG);
    const fixture = await fillReportFixture(ws.db);
    await ws.db.run(
      `update risk_daily set benchmark_id = 'bm-policy', tracking_error_ex_ante = 0.021 + window_days / 10000, beta_to_benchmark = 0.97,
         tracking_error_realized = case when estimator = 'sample' then 0.025 end where portfolio_id = $1`,
      [FIXTURE_PORTFOLIO],
    );
    await ws.db.run(
      `insert into risk_active_contributions (portfolio_id, date, window_days, estimator, benchmark_id, security_id, weight, benchmark_weight, active_weight, mcr, ccr, pct, run_id) values
       ($1, $2::date, 63, 'sample', 'bm-policy', 'EQ-VELLANCE', 0.24, 0.1, 0.14, 0.09, 0.0126, 0.6, 7),
       ($1, $2::date, 63, 'sample', 'bm-policy', 'EQ-QUILLBECK', 0, 0.08, -0.08, -0.07, 0.0056, 0.4, 7)`,
      [FIXTURE_PORTFOLIO, fixture.asOf],
    );
    const data = await loadReportData(ws.db, ws.config, FIXTURE_PORTFOLIO);
    expect(data.exposure.benchmark?.id).toBe('bm-policy');
    expect(data.exposure.benchmark?.byWindow.map((r) => `${r.estimator}:${r.window_days}`)).toEqual(['sample:21', 'sample:63', 'sample:252', 'ewma:0']);
    const html = renderReport(data, new Date('2026-12-01T12:00:00Z'));
    expect(html).toContain('Against the benchmark bm-policy');
    expect(html).toContain('<td>63-day</td><td class="num">2.73%</td><td class="num">2.50%</td><td class="num">0.97</td>');
    expect(html).toContain('<td>EWMA</td><td class="num">2.10%</td><td class="num">n/a</td>');
    expect(html).toContain('<td>EQ-QUILLBECK</td><td class="num">0.0%</td><td class="num">8.0%</td><td class="num">-8.0%</td><td class="num">40.0%</td>');
  });
});

describe('the holdings table', () => {
  let ws: TempWorkspace | undefined;
  afterEach(() => ws?.cleanup());

  it('lists every position with quantity, local price, base value and weight as recomputed from the raw files, largest first', async () => {
    ws = await tempWorkspace(FIXTURE_CONFIG);
    const fixture = await fillReportFixture(ws.db);
    const data = await loadReportData(ws.db, ws.config, FIXTURE_PORTFOLIO);
    // independent of the views: value = quantity × price × fx (cash at 1 in its currency), weight = value / sum
    // (the definition of a position's market value and weight; common practice, no source)
    const raw = await ws.db.all<{ security_id: string; quantity: number; price: number; value: number }>(
      `select p.security_id, p.quantity, coalesce(x.price, 1) as price,
         p.quantity * coalesce(x.price, 1) * coalesce(f.rate, 1) as value
       from positions p
       left join prices x on x.security_id = p.security_id and x.date = $1
       left join fx_rates f on f.currency = x.currency and f.date = $1
       order by value desc`,
      [fixture.asOf],
    );
    const total = raw.reduce((s, r) => s + r.value, 0);
    expect(data.holdings.map((h) => h.security_id)).toEqual(raw.map((r) => r.security_id));
    raw.forEach((r, i) => {
      expect(data.holdings[i].quantity).toBe(r.quantity);
      expect(data.holdings[i].price_local).toBeCloseTo(r.price, 10);
      expect(data.holdings[i].value_base).toBeCloseTo(r.value, 6);
      expect(data.holdings[i].weight).toBeCloseTo(r.value / total, 12);
    });
    const cash = data.holdings.find((h) => h.security_id === 'CASH:USD');
    expect(cash).toMatchObject({ asset_class: 'cash', currency: 'USD', price_local: 1 });
    expect(data.holdings.find((h) => h.security_id === 'EQ-NORDWIND')).toMatchObject({ asset_class: 'equity', currency: 'EUR' });
    const html = renderReport(data, new Date('2026-12-01T12:00:00Z'));
    expect(html).toContain('data-section="holdings"');
    expect(html).toContain(`<td class="num">${formatMoney(raw[0].value)}</td><td class="num">${formatPercent(raw[0].value / total)}</td>`);
  });

  it('keeps a position that has no price, with no value and no weight, and says why', async () => {
    ws = await tempWorkspace(FIXTURE_CONFIG);
    await fillReportFixture(ws.db);
    await ws.db.run("delete from prices where security_id = 'CM-EMBERSTONE'");
    await refreshDerived(ws.db);
    const data = await loadReportData(ws.db, ws.config, FIXTURE_PORTFOLIO);
    expect(data.holdings).toHaveLength(6);
    const last = data.holdings[data.holdings.length - 1];
    expect(last).toMatchObject({ security_id: 'CM-EMBERSTONE', value_base: null, weight: null, price_status: 'missing_price' });
    const html = renderReport(data, new Date('2026-12-01T12:00:00Z'));
    expect(html).toContain('<td class="num">n/a</td><td class="num">n/a</td><td class="num">n/a</td><td>missing_price</td>');
    expect(html).toContain('1 holding has no value');
  });
});

describe('rebalances on the volatility charts', () => {
  let ws: TempWorkspace | undefined;
  afterEach(() => ws?.cleanup());

  it('marks a new snapshot that changes a quantity or drops a holding, not a resent identical one nor one before the charts', async () => {
    ws = await tempWorkspace(FIXTURE_CONFIG);
    const fixture = await fillReportFixture(ws.db);
    const { dates } = fixture;
    // a rebalance is a snapshot whose holdings differ from the one before (common practice, no source)
    const snapshot = (t: number, quantities: Record<string, number>) =>
      Object.entries(quantities).map(([id, q], i) => `('${dates[t]}', '${FIXTURE_PORTFOLIO}', '${id}', ${q}, 1, ${1000 + t * 10 + i})`);
    const base = { 'EQ-BRAMBLEFORD': 9000, 'EQ-VELLANCE': 5000, 'EQ-NORDWIND': 20000, 'BD-KESTREL-28': 6000, 'CM-EMBERSTONE': 12000, 'CASH:USD': 150000 };
    const rows = [
      ...snapshot(100, { ...base, 'EQ-VELLANCE': 5500 }), // before the charts' first date
      ...snapshot(250, { ...base, 'EQ-VELLANCE': 6000 }),
      ...snapshot(260, { ...base, 'EQ-VELLANCE': 6000 }), // the same holdings sent again
      ...snapshot(270, { ...base, 'EQ-VELLANCE': 6000, 'CM-EMBERSTONE': 0 }), // a zero quantity: no longer held
    ];
    await ws.db.run(`insert into positions (date, portfolio_id, security_id, quantity, file_id, line) values ${rows.join(',')}`);
    await refreshDerived(ws.db);
    const data = await loadReportData(ws.db, ws.config, FIXTURE_PORTFOLIO);
    expect(data.chartFrom > dates[100]).toBe(true);
    expect(data.rebalances).toEqual([dates[250], dates[270]]);
    expect(data.holdings.map((h) => h.security_id)).not.toContain('CM-EMBERSTONE');
    const html = renderReport(data, new Date('2026-12-01T12:00:00Z'));
    // both ticks on the 21-day, 63-day and EWMA panels and the realized chart; the 252-day line starts at
    // dates[252], after the first rebalance, so its panel has only the second; one legend line per chart
    expect(html.match(/<line class="marker"/g)).toHaveLength(4 * 2 + 1);
    expect(html.match(/rebalance \(new positions snapshot\)/g)).toHaveLength(5);
  });

  it('draws no tick and no legend line when the holdings never changed', async () => {
    ws = await tempWorkspace(FIXTURE_CONFIG);
    await fillReportFixture(ws.db);
    const data = await loadReportData(ws.db, ws.config, FIXTURE_PORTFOLIO);
    expect(data.rebalances).toEqual([]);
    const html = renderReport(data, new Date('2026-12-01T12:00:00Z'));
    expect(html).not.toContain('class="marker"');
    expect(html).not.toContain('new positions snapshot)');
  });
});

describe('writeReport and riskfold report', () => {
  let ws: TempWorkspace | undefined;
  afterEach(() => ws?.cleanup());

  it('writes report-<portfolio>-<as of>.html into the current folder by default', async () => {
    ws = await tempWorkspace(FIXTURE_CONFIG);
    const fixture = await fillReportFixture(ws.db);
    ws.db.close();
    const written = await writeReport(ws.config, { portfolio: FIXTURE_PORTFOLIO, cwd: ws.dir });
    expect(written.file).toBe(path.join(ws.dir, `report-acct-growth-${fixture.asOf}.html`));
    expect(readFileSync(written.file, 'utf8')).toContain('<h1>acct-growth</h1>');
    expect(defaultReportName('a/b c', '2026-01-02')).toBe('report-a_b_c-2026-01-02.html');
  });

  it('runs from the command line: a file with --out, and a one-line reason and non-zero exit for an unknown portfolio', async () => {
    ws = await tempWorkspace(FIXTURE_CONFIG);
    await fillReportFixture(ws.db);
    ws.db.close();
    const out = path.join(ws.dir, 'growth.html');
    const ok = await run(process.execPath, [CLI, 'report', '--config', ws.config.configPath, '--portfolio', FIXTURE_PORTFOLIO, '--out', out]);
    expect(ok.stdout).toContain(`written to ${out}`);
    expect(existsSync(out)).toBe(true);
    const failed = await run(process.execPath, [CLI, 'report', '--config', ws.config.configPath, '--portfolio', 'acct-nowhere']).catch(
      (e: { code: number; stderr: string }) => e,
    );
    expect('code' in failed && failed.code).toBe(1);
    expect(failed.stderr.trim().split('\n')).toHaveLength(1);
    expect(failed.stderr).toContain('known: acct-growth');
  });
});
