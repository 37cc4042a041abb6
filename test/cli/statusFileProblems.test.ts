import { appendFileSync, rmSync, writeFileSync } from 'node:fs';
import path from 'node:path';
import { afterEach, describe, expect, it } from 'vitest';
import { runBatch } from '../../src/batch/runBatch.ts';
import { pricesCsv } from '../helpers/files.ts';
import { tempWorkspace, type TempWorkspace } from '../helpers/workspace.ts';
import { runCli } from './cliProcess.ts';

describe('status lists the deliveries operations must look at', () => {
  let ws: TempWorkspace | undefined;
  afterEach(() => ws?.cleanup());

  it('counts held files and changed or missing archived files by kind, and --details names each with its reason and since when', async () => {
    ws = await tempWorkspace();
    const inbox = (name: string, text: string) => writeFileSync(path.join(ws!.config.inbox, name), text);
    inbox('prices_a.csv', pricesCsv(5, 2, '2020-01-01'));
    inbox('prices_b.csv', pricesCsv(5, 2, '2020-02-01'));
    await runBatch(ws.db, ws.config, ws.log, ['prices_a.csv', 'prices_b.csv'].map((f) => path.join(ws!.config.inbox, f)));
    const archived = await ws.db.all<{ file_id: number; name: string; archived_path: string }>('select file_id, name, archived_path from ingested_files order by name');
    expect(archived.map((f) => f.name)).toEqual(['prices_a.csv', 'prices_b.csv']);
    ws.closeDb();
    // a sender that went on writing into a file already taken, and one archived file lost
    appendFileSync(archived[0].archived_path, '2020-01-06,EQ-NORDWIND,101.5\n');
    rmSync(archived[1].archived_path);
    // still being written: the last line has no line break
    inbox('prices_c.csv', 'date,security_id,price\n2020-03-01,EQ-NORDWIND,10');

    const ingest = runCli(['ingest', '--config', ws.config.configPath]);
    expect(ingest.status, ingest.stderr).toBe(0);
    const status = runCli(['status', '--config', ws.config.configPath]);
    expect(status.status, status.stderr).toBe(0);
    const section = status.stdout.split('\n== ').find((s) => s.startsWith('files held or changed after archiving, by kind'))!;
    const rows = section.split('\n').filter((l) => /^(archive|held): /.test(l)).map((l) => l.split(/\s{2,}/).slice(0, 2));
    expect(rows).toEqual([
      ['archive: changed', '1'],
      ['archive: missing', '1'],
      ['held: unterminated_line', '1'],
    ]);

    const details = runCli(['status', '--details', '--format', 'json', '--config', ws.config.configPath]);
    const json = JSON.parse(details.stdout) as Record<string, { total: number; rows: Record<string, string>[] }>;
    expect(json.fileProblems.total).toBe(3);
    const named = json.fileProblemRows.rows.map((r) => [r.name, r.problem]).sort();
    expect(named).toEqual([
      ['prices_a.csv', 'archive: changed'],
      ['prices_b.csv', 'archive: missing'],
      ['prices_c.csv', 'held: unterminated_line'],
    ]);
    const held = json.fileProblemRows.rows.find((r) => r.name === 'prices_c.csv')!;
    expect(held.reason).toMatch(/last line has no line break/);
    expect(Number.isNaN(Date.parse(held.since))).toBe(false);
    const changed = json.fileProblemRows.rows.find((r) => r.name === 'prices_a.csv')!;
    expect(changed.reason).toBe(`${archived[0].archived_path} (file_id ${archived[0].file_id}) no longer matches the bytes that were loaded`);
  });
});
