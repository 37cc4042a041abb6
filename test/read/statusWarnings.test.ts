import { afterEach, describe, expect, it } from 'vitest';
import { runRecompute } from '../../src/batch/runRecompute.ts';
import { readStatus } from '../../src/read/readStatus.ts';
import { insertPositions } from '../helpers/rawRows.ts';
import { tempWorkspace, type TempWorkspace } from '../helpers/workspace.ts';

describe('status warns of what would otherwise fail silently', () => {
  let ws: TempWorkspace | undefined;
  afterEach(() => ws?.cleanup());

  it('lists first a limit on a portfolio id no positions name, which the limit check logs too: it watches nothing', async () => {
    // "acct-grwoth" for "acct-growth": the intended portfolio has no limit of its own
    ws = await tempWorkspace({
      limits: [
        { portfolio: 'acct-grwoth', window: 63, limit: 0.1 },
        { portfolio: 'acct-income', window: 63, limit: 0.2 },
        { portfolio: '*', window: 63, limit: 0.15 },
      ],
    });
    const status = () => readStatus(ws!.db, ws!.config, { portfolio: null, details: false, now: new Date() });
    // before any positions nothing is known, so nothing is called unknown
    expect((await status()).map((s) => s.key)).not.toContain('limitsOnUnknownPortfolios');
    await insertPositions(ws.db, 1, [
      ['2026-03-02', 'acct-growth', 'CASH:USD', 1000],
      ['2026-03-02', 'acct-income', 'CASH:USD', 1000],
    ]);
    const [first] = await status();
    expect(first.key).toBe('limitsOnUnknownPortfolios');
    expect(first.result.rows).toEqual([['acct-grwoth', 'vol_ex_ante', 63, 'acct-growth, acct-income']]);
    await runRecompute(ws.db, ws.config, ws.log, { trigger: 'test' });
    const logged = ws.logLines().filter((l) => String(l.msg).startsWith('a limit is set on a portfolio no positions name'));
    expect(logged).toEqual([expect.objectContaining({ level: 40, portfolio: 'acct-grwoth', window: 63, known: ['acct-growth', 'acct-income'] })]);
  });

  it('says when no alert channel is configured and alerts go to the log only', async () => {
    ws = await tempWorkspace({ alerts: {} });
    expect(ws.config.alerts.file).toBeUndefined();
    const alerts = async () => (await readStatus(ws!.db, ws!.config, { portfolio: null, details: false, now: new Date() })).find((s) => s.key === 'alerts');
    expect((await alerts())?.note).toBe('no alert channel is configured (alerts.file, alerts.webhook): alerts go to the worker log only');
    ws.cleanup();
    ws = await tempWorkspace();
    expect((await alerts())?.note).toBeUndefined();
  });
});
