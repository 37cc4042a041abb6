import { closeSync, createReadStream, existsSync, fstatSync, openSync, readSync } from 'node:fs';
import { pipeline } from 'node:stream/promises';
import { createGunzip } from 'node:zlib';
import type { Config } from '../config/load.ts';
import type { Rejection } from '../errors.ts';
import { ENCODING_PROBE_BYTES, encodingRejection } from './encoding.ts';
import { MANIFEST_SUFFIX, readManifest, type Manifest } from './manifest.ts';

/** Why a delivery is left in the inbox for now. */
export interface HoldReason {
  code:
    | 'unterminated_line'
    | 'no_done_marker'
    | 'no_manifest'
    | 'bad_manifest'
    | 'truncated_stream'
    | 'empty_so_far'
    | 'snapshot_drop'
    | 'hard_link'
    | 'not_regular_file';
  reason: string;
}

/** Complete: with the manifest its load must match, when the config asks for one. */
export type Completeness =
  | { state: 'complete'; manifest: Manifest | null }
  | { state: 'held'; hold: HoldReason }
  | { state: 'rejected'; rejection: Rejection };

type BytesVerdict = { state: 'complete' } | Exclude<Completeness, { state: 'complete' }>;

const NEWLINE = 0x0a;

/**
 * Whether a delivery looks completely written: its done-marker and its manifest are
 * there (when the config asks for them), it is not empty, and its last line ends with a
 * line break (for .gz the last decompressed byte, found by one streaming pass that also
 * enforces `ingest.maxExpandedMB`). A sender paused mid-write leaves a last line without
 * one, which read_csv would take as a whole row. UTF-16 text is rejected before that
 * test, which it would fail for good (its last byte is a NUL, not a line break).
 */
export async function checkComplete(config: Config, filePath: string, name: string): Promise<Completeness> {
  const marker = markerSuffix(config);
  if (marker !== null && !existsSync(`${filePath}${marker}`)) {
    return held('no_done_marker', `waiting for its marker ${name}${marker}`);
  }
  let manifest: Manifest | null = null;
  if (config.ingest.manifest === 'required') {
    const read = readManifest(filePath);
    if (read.state === 'missing') return held('no_manifest', `waiting for its manifest ${name}${MANIFEST_SUFFIX}`);
    if (read.state === 'unreadable') return held('bad_manifest', `its manifest ${name}${MANIFEST_SUFFIX} ${read.reason}`);
    manifest = read.manifest;
  }
  const bytes = await checkBytes(config, filePath, name);
  return bytes.state === 'complete' ? { state: 'complete', manifest } : bytes;
}

/**
 * Compressed forms other than gzip, by ending: Node's zlib cannot stream them (zstd
 * needs Node 22.15), so neither the open last line nor the expansion limit could be
 * checked while reading; DuckDB would read some (zstd) unchecked and others as raw bytes.
 */
const UNCHECKABLE_COMPRESSION: Record<string, string> = {
  zst: 'zstd',
  zstd: 'zstd',
  bz2: 'bzip2',
  xz: 'xz',
  lz4: 'lz4',
  br: 'brotli',
  zip: 'zip',
  '7z': '7-Zip',
};

async function checkBytes(config: Config, filePath: string, name: string): Promise<BytesVerdict> {
  if (/\.gz$/i.test(name)) return checkGzip(filePath, name, config.ingest.maxExpandedMB);
  const ending = /\.([a-z0-9]+)$/i.exec(name)?.[1].toLowerCase();
  const format = ending === undefined ? undefined : UNCHECKABLE_COMPRESSION[ending];
  if (format !== undefined) {
    return {
      state: 'rejected',
      rejection: {
        code: 'unsupported_compression',
        file: name,
        value: `.${ending}`,
        expected: 'an uncompressed file or a .gz',
        message: `compressed as ${format}, which riskfold cannot check while reading (a cut last line, ingest.maxExpandedMB); not loaded`,
        hint: 'deliver it uncompressed or gzip-compressed (.gz)',
        fixIn: 'file',
      },
    };
  }
  const { head, last } = readEnds(filePath);
  return judgeText(head, last, name, 'the file is empty (still being written?)');
}

/** The verdict on a file's text from its first bytes and its last: UTF-16, empty, an open last line, or complete. */
function judgeText(head: Buffer, last: number | null, name: string, emptyReason: string): BytesVerdict {
  const wrongEncoding = encodingRejection(head, name);
  if (wrongEncoding !== null) return { state: 'rejected', rejection: wrongEncoding };
  if (last === null) return held('empty_so_far', emptyReason);
  if (last !== NEWLINE) return held('unterminated_line', 'its last line has no line break (still being written?)');
  return { state: 'complete' };
}

/** '.done' or '.ok' when the config asks for a marker; null otherwise. */
export function markerSuffix(config: Config): string | null {
  return config.ingest.doneMarker === 'none' ? null : `.${config.ingest.doneMarker}`;
}

/** The endings of the files a sender puts beside a delivery under this config (marker, manifest): none is a delivery. */
export function companionSuffixes(config: Config): string[] {
  const marker = markerSuffix(config);
  return [...(marker === null ? [] : [marker]), ...(config.ingest.manifest === 'required' ? [MANIFEST_SUFFIX] : [])];
}

function held(code: HoldReason['code'], reason: string): { state: 'held'; hold: HoldReason } {
  return { state: 'held', hold: { code, reason } };
}

/** The file's first bytes (up to ENCODING_PROBE_BYTES) and its last byte (null when empty). */
function readEnds(filePath: string): { head: Buffer; last: number | null } {
  const fd = openSync(filePath, 'r');
  try {
    const size = fstatSync(fd).size;
    const head = Buffer.alloc(Math.min(size, ENCODING_PROBE_BYTES));
    const got = readSync(fd, head, 0, head.length, 0);
    if (size === 0) return { head, last: null };
    const last = Buffer.alloc(1);
    readSync(fd, last, 0, 1, size - 1);
    return { head: head.subarray(0, got), last: last[0] };
  } finally {
    closeSync(fd);
  }
}

/**
 * Decompresses in a stream, counting: past the limit it stops at once (a gzip bomb costs
 * no more than the limit). A stream that ends early is a file still being written.
 */
async function checkGzip(filePath: string, name: string, maxExpandedMB: number): Promise<BytesVerdict> {
  const limit = maxExpandedMB * 1024 * 1024;
  let expanded = 0;
  let last: number | null = null;
  let head = Buffer.alloc(0);
  let tooLarge = false;
  try {
    await pipeline(createReadStream(filePath, { highWaterMark: 1 << 20 }), createGunzip(), async (source: AsyncIterable<Buffer>) => {
      for await (const bytes of source) {
        expanded += bytes.length;
        if (bytes.length > 0) last = bytes[bytes.length - 1];
        if (head.length < ENCODING_PROBE_BYTES) head = Buffer.concat([head, bytes.subarray(0, ENCODING_PROBE_BYTES - head.length)]);
        if (expanded > limit) {
          tooLarge = true;
          throw new Error('expansion limit passed');
        }
      }
    });
  } catch (err) {
    // the pipeline may report the stop as its own abort: the flag is the truth
    if (tooLarge) {
      return {
        state: 'rejected',
        rejection: {
          code: 'too_large',
          file: name,
          expected: `at most ${maxExpandedMB} MB once decompressed (ingest.maxExpandedMB)`,
          message: `expands past ${maxExpandedMB} MB when decompressed; refused while reading`,
        },
      };
    }
    const code = (err as NodeJS.ErrnoException).code;
    if (code === 'Z_BUF_ERROR') return held('truncated_stream', 'its compressed stream ends early (still being written?)');
    // not gzip at all: read_csv rejects it with its own words
    if (code === 'Z_DATA_ERROR') return { state: 'complete' };
    throw err;
  }
  return judgeText(head, last, name, 'the file decompresses to nothing (still being written?)');
}
