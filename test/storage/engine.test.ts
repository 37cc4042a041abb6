import { afterEach, describe, expect, it } from 'vitest';
import { resolveConfig } from '../../src/config/load.ts';
import { openDatabase } from '../../src/storage/database.ts';
import { openForReading } from '../../src/storage/workspace.ts';
import { tempWorkspace, type TempWorkspace } from '../helpers/workspace.ts';

/** How DuckDB itself reports a memory_limit written as `size` (it prints sizes in its own units). */
async function duckdbReportOf(size: string): Promise<string> {
  const probe = await openDatabase(':memory:');
  try {
    await probe.run(`set memory_limit = '${size}'`);
    const [{ v }] = await probe.all<{ v: string }>(`select current_setting('memory_limit') as v`);
    return v;
  } finally {
    probe.close();
  }
}

async function settingsOf(ws: TempWorkspace['db']): Promise<{ memory: string; threads: number }> {
  const [row] = await ws.all<{ memory: string; threads: number }>(
    `select current_setting('memory_limit') as memory, current_setting('threads')::integer as threads`,
  );
  return row;
}

describe('engine settings (config engine.*)', () => {
  let ws: TempWorkspace | null = null;
  afterEach(() => {
    ws?.cleanup();
    ws = null;
  });

  it('caps the worker database at 1GB by default, leaving threads to DuckDB', async () => {
    ws = await tempWorkspace();
    expect(ws.config.engine).toEqual({ memoryLimit: '1GB' });
    expect((await settingsOf(ws.db)).memory).toBe(await duckdbReportOf('1GB'));
  });

  it('applies memoryLimit and threads to the worker and to readers', async () => {
    ws = await tempWorkspace({ engine: { memoryLimit: '256MiB', threads: 1 } });
    expect(await settingsOf(ws.db)).toEqual({ memory: await duckdbReportOf('256MiB'), threads: 1 });
    ws.closeDb();
    const reader = await openForReading(ws.config);
    try {
      expect(reader.source).toBe('database');
      expect(await settingsOf(reader.db)).toEqual({ memory: await duckdbReportOf('256MiB'), threads: 1 });
    } finally {
      reader.db.close();
    }
  });

  it('refuses a size DuckDB would not read, naming the field', () => {
    expect(() => resolveConfig({ engine: { memoryLimit: 'lots' } }, 'cfg.json')).toThrow(/"1GB"[\s\S]*engine\.memoryLimit/);
    expect(() => resolveConfig({ engine: { threads: 0 } }, 'cfg.json')).toThrow(/engine\.threads/);
  });
});
