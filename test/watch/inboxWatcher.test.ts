import { appendFileSync, mkdirSync, mkdtempSync, readFileSync, renameSync, rmSync, symlinkSync, utimesSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import type { FSWatcher } from 'chokidar';
import { afterEach, describe, expect, it } from 'vitest';
import { resolveConfig, type Config } from '../../src/config/load.ts';
import { memoryLogger } from '../../src/log/logger.ts';
import { isDeliveryName, listInbox } from '../../src/watch/inboxFiles.ts';
import { watchInbox } from '../../src/watch/inboxWatcher.ts';
import { waitFor } from '../helpers/wait.ts';

describe('watchInbox', () => {
  let dir: string;
  let watcher: FSWatcher | undefined;
  afterEach(async () => {
    await watcher?.close();
    watcher = undefined;
    rmSync(dir, { recursive: true, force: true });
  });

  function setup(stableMs = 300): { config: Config; inbox: string } {
    dir = mkdtempSync(path.join(tmpdir(), 'riskfold-watch-'));
    const config = resolveConfig({ watch: { stableMs, pollMs: 50 } }, path.join(dir, 'pipeline.config.json'));
    mkdirSync(config.inbox, { recursive: true });
    return { config, inbox: config.inbox };
  }

  it('announces a file written slowly in chunks once, after the last chunk', async () => {
    const { config, inbox } = setup(400);
    const seen: { file: string; bytes: number }[] = [];
    watcher = await watchInbox(config, memoryLogger().log, (file) => seen.push({ file, bytes: readFileSync(file).length }));
    const file = path.join(inbox, 'prices_20260302.csv');
    const chunk = '2026-03-02,EQ-NORDWIND,101.25\n';
    writeFileSync(file, 'date,security_id,price\n');
    for (let i = 0; i < 6; i++) {
      await new Promise((resolve) => setTimeout(resolve, 150)); // shorter than stableMs: still being written
      appendFileSync(file, chunk);
    }
    await waitFor(() => seen.length > 0, 5000, 'the announcement');
    // a little longer than stableMs again: a second announcement would have come by now
    await new Promise((resolve) => setTimeout(resolve, 600));
    expect(seen).toEqual([{ file, bytes: 'date,security_id,price\n'.length + 6 * chunk.length }]);
  });

  it('ignores hidden, .tmp and .part files, and symlinks, but takes the file renamed into place', async () => {
    const { config, inbox } = setup(100);
    const seen: string[] = [];
    watcher = await watchInbox(config, memoryLogger().log, (file) => seen.push(path.basename(file)));
    writeFileSync(path.join(inbox, '.prices_hidden.csv'), 'x\n');
    writeFileSync(path.join(inbox, 'prices_a.csv.tmp'), 'x\n');
    writeFileSync(path.join(inbox, 'prices_b.csv.part'), 'x\n');
    const outside = path.join(dir, 'elsewhere.csv');
    writeFileSync(outside, 'x\n');
    symlinkSync(outside, path.join(inbox, 'prices_link.csv'));
    mkdirSync(path.join(inbox, 'sub'));
    writeFileSync(path.join(inbox, 'sub', 'prices_deep.csv'), 'x\n');
    writeFileSync(path.join(inbox, 'prices_c.csv.part'), 'date,security_id,price\n');
    renameSync(path.join(inbox, 'prices_c.csv.part'), path.join(inbox, 'prices_c.csv'));
    await waitFor(() => seen.includes('prices_c.csv'), 5000, 'the renamed file');
    await new Promise((resolve) => setTimeout(resolve, 400));
    expect(seen).toEqual(['prices_c.csv']);
  });
});

describe('listInbox', () => {
  it('lists deliveries oldest first, without hidden or partial files', () => {
    const dir = mkdtempSync(path.join(tmpdir(), 'riskfold-list-'));
    try {
      const now = Date.now();
      const mk = (name: string, secondsAgo: number) => {
        const f = path.join(dir, name);
        writeFileSync(f, 'x\n');
        const t = new Date(now - secondsAgo * 1000);
        utimesSync(f, t, t);
      };
      mk('prices_b.csv', 30);
      mk('positions_a.csv', 60);
      mk('fx_c.csv', 30);
      mk('.hidden.csv', 90);
      mk('prices_d.csv.part', 90);
      expect(listInbox(dir).map((f) => path.basename(f))).toEqual(['positions_a.csv', 'fx_c.csv', 'prices_b.csv']);
    } finally {
      rmSync(dir, { recursive: true, force: true });
    }
  });

  it('isDeliveryName: common practice of transfer tools, no source', () => {
    expect(isDeliveryName('prices_20260302.csv.gz')).toBe(true);
    expect(isDeliveryName('.~lock.prices.csv#')).toBe(false);
    expect(isDeliveryName('prices.csv.PART')).toBe(false);
  });
});
