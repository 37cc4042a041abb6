import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { afterEach, describe, expect, it } from 'vitest';
import { sha256OfFile } from '../../src/ingest/fingerprint.ts';

let dir: string | undefined;
afterEach(() => dir && rmSync(dir, { recursive: true, force: true }));

describe('sha256OfFile', () => {
  it('matches the FIPS 180-2 example for "abc" (NIST, Appendix B.1; value from memory)', async () => {
    dir = mkdtempSync(path.join(tmpdir(), 'riskfold-sha-'));
    const file = path.join(dir, 'abc.csv');
    writeFileSync(file, 'abc');
    expect(await sha256OfFile(file)).toBe('ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad');
  });

  it('hashes an empty file to the SHA-256 of the empty string (NIST test vector; value from memory)', async () => {
    dir = mkdtempSync(path.join(tmpdir(), 'riskfold-sha-'));
    const file = path.join(dir, 'empty.csv');
    writeFileSync(file, '');
    expect(await sha256OfFile(file)).toBe('e3b0c44298fc1c149afbf4c8996fb92427ae41e4649b934ca495991b7852b855');
  });
});
