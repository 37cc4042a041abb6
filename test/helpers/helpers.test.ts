import { existsSync, readFileSync } from 'node:fs';
import path from 'node:path';
import { gunzipSync } from 'node:zlib';
import { afterEach, describe, expect, it } from 'vitest';
import { writeCsv } from './files.ts';
import { waitFor } from './wait.ts';
import { tempWorkspace, type TempWorkspace } from './workspace.ts';

describe('test helpers', () => {
  let ws: TempWorkspace | undefined;
  afterEach(() => ws?.cleanup());

  it('tempWorkspace opens a migrated database with absolute folders and removes it all on cleanup', async () => {
    ws = await tempWorkspace({ baseCurrency: 'EUR' });
    expect(ws.config.inbox).toBe(path.join(ws.dir, 'inbox'));
    expect(existsSync(ws.config.inbox)).toBe(true);
    const rows = await ws.db.all<{ base_currency: string }>('select base_currency from pipeline_settings');
    expect(rows).toEqual([{ base_currency: 'EUR' }]);
    const dir = ws.dir;
    ws.cleanup();
    expect(existsSync(dir)).toBe(false);
  });

  it('writeCsv writes BOM, CRLF and gzip byte for byte', async () => {
    ws = await tempWorkspace();
    const plain = writeCsv(ws.dir, 'a.csv', [['date', 'price'], ['2026-01-02', 1.5]], { bom: true, eol: '\r\n' });
    expect(readFileSync(plain)).toEqual(Buffer.from('\uFEFFdate,price\r\n2026-01-02,1.5\r\n'));
    const gz = writeCsv(ws.dir, 'b.csv.gz', [['x'], ['1']], { gzip: true, delimiter: ';' });
    expect(gunzipSync(readFileSync(gz)).toString()).toBe('x\n1\n');
  });

  it('waitFor returns the first truthy value and times out with the awaited thing named', async () => {
    let n = 0;
    await expect(waitFor(() => ++n >= 3 && n, 1000)).resolves.toBe(3);
    await expect(waitFor(() => false, 60, 'the moon')).rejects.toThrow(/waiting for the moon/);
  });
});
