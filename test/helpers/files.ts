import { mkdirSync, writeFileSync } from 'node:fs';
import path from 'node:path';
import { gzipSync } from 'node:zlib';

export interface CsvOptions {
  delimiter?: string;
  /** Line ending; default '\n'. */
  eol?: '\n' | '\r\n';
  /** Prefix the UTF-8 byte-order mark. */
  bom?: boolean;
  /** Write gzip-compressed bytes (give the name a .gz ending). */
  gzip?: boolean;
}

/**
 * Writes a CSV file (header row first) and returns its path. Cells are written as
 * given, no quoting: tests choose their own bad input byte for byte.
 */
export function writeCsv(dir: string, name: string, rows: (string | number)[][], options: CsvOptions = {}): string {
  const eol = options.eol ?? '\n';
  const text = rows.map((r) => r.join(options.delimiter ?? ',')).join(eol) + eol;
  const bytes = Buffer.concat([Buffer.from(options.bom ? '\uFEFF' : ''), Buffer.from(text, 'utf8')]);
  mkdirSync(dir, { recursive: true });
  const file = path.join(dir, name);
  writeFileSync(file, options.gzip ? gzipSync(bytes) : bytes);
  return file;
}

const SECURITIES = ['EQ-NORDWIND', 'EQ-SALTMARSH', 'BD-KESTREL-28', 'EQ-OAKHOLLOW'];

/**
 * Invented daily prices: `days` business-like dates from 2020-01-01 for `securities`
 * securities (names cycle with a suffix past the four above). Written straight to
 * `file` as one string: big enough files make an ingest take a while.
 */
export function pricesCsv(days: number, securities = 4, start = '2020-01-01'): string {
  const lines = ['date,security_id,price'];
  const t0 = Date.parse(`${start}T00:00:00Z`);
  for (let d = 0; d < days; d++) {
    const date = new Date(t0 + d * 86_400_000).toISOString().slice(0, 10);
    for (let s = 0; s < securities; s++) {
      const id = s < SECURITIES.length ? SECURITIES[s] : `${SECURITIES[s % SECURITIES.length]}-${Math.floor(s / SECURITIES.length)}`;
      lines.push(`${date},${id},${(100 + s + Math.sin(d / 7 + s)).toFixed(4)}`);
    }
  }
  return `${lines.join('\n')}\n`;
}

/**
 * The smallest book with a risk figure: prices of EQ-NORDWIND and EQ-SALTMARSH over
 * `days` days from 2020-01-01 and one portfolio holding 100 and 50 of them from the first
 * day, written to `inbox`. Returns the two paths, prices first.
 */
export function writeTwoHoldings(
  inbox: string,
  { days, portfolio = 'acct-growth', prices = 'prices_all.csv', positions = 'positions_start.csv' }: { days: number; portfolio?: string; prices?: string; positions?: string },
): [string, string] {
  mkdirSync(inbox, { recursive: true });
  const pricesFile = path.join(inbox, prices);
  writeFileSync(pricesFile, pricesCsv(days, 2));
  const positionsFile = writeCsv(inbox, positions, [
    ['date', 'portfolio_id', 'security_id', 'quantity'],
    ['2020-01-01', portfolio, 'EQ-NORDWIND', 100],
    ['2020-01-01', portfolio, 'EQ-SALTMARSH', 50],
  ]);
  return [pricesFile, positionsFile];
}
