import { readFileSync } from 'node:fs';
import { z } from 'zod';
import type { Rejection } from '../errors.ts';

/**
 * What a custodian states about a delivery in `<name>.manifest` (with
 * `ingest.manifest: "required"`): its number of data rows (the header not counted) and
 * the sha256 of its bytes as delivered (the compressed bytes of a `.gz`). Other keys are
 * allowed and ignored.
 */
export interface Manifest {
  rows: number;
  sha256: string;
}

export const MANIFEST_SUFFIX = '.manifest';

const manifestSchema = z.object({
  rows: z.number().int().min(0),
  sha256: z
    .string()
    .regex(/^[0-9a-f]{64}$/i, 'must be 64 hexadecimal digits')
    .transform((s) => s.toLowerCase()),
});

export type ManifestRead = { state: 'missing' } | { state: 'unreadable'; reason: string } | { state: 'present'; manifest: Manifest };

/** The manifest beside `filePath`, read and checked for shape; never throws for what a sender wrote. */
export function readManifest(filePath: string): ManifestRead {
  let text: string;
  try {
    text = readFileSync(`${filePath}${MANIFEST_SUFFIX}`, 'utf8');
  } catch (err) {
    if ((err as NodeJS.ErrnoException).code === 'ENOENT') return { state: 'missing' };
    throw err;
  }
  let json: unknown;
  try {
    json = JSON.parse(text);
  } catch {
    return { state: 'unreadable', reason: 'is not JSON (still being written?)' };
  }
  const parsed = manifestSchema.safeParse(json);
  if (!parsed.success) {
    const issue = parsed.error.issues[0];
    return { state: 'unreadable', reason: `${issue.path.join('.') || 'its top level'}: ${issue.message}; expected {"rows": <data rows>, "sha256": "<64 hex digits>"}` };
  }
  return { state: 'present', manifest: parsed.data };
}

/** The rejection of a delivery whose rows or bytes differ from what its manifest states, or null when both match. */
export function manifestMismatch(name: string, manifest: Manifest, actual: Manifest): Rejection | null {
  const rowsDiffer = manifest.rows !== actual.rows;
  const bytesDiffer = manifest.sha256 !== actual.sha256;
  if (!rowsDiffer && !bytesDiffer) return null;
  const differs = [rowsDiffer ? 'data rows' : null, bytesDiffer ? 'sha256' : null].filter(Boolean).join(' and ');
  return {
    code: 'manifest_mismatch',
    file: name,
    value: `${actual.rows} data rows, sha256 ${actual.sha256}`,
    expected: `${manifest.rows} data rows, sha256 ${manifest.sha256} (${name}${MANIFEST_SUFFIX})`,
    message: `${differs} differ from its manifest: expected ${manifest.rows} rows and sha256 ${manifest.sha256}, got ${actual.rows} rows and sha256 ${actual.sha256}`,
    hint: 'deliver the whole file and its manifest again',
    fixIn: 'file',
  };
}
