import type { DuckDBBlobValue } from '@duckdb/node-api';
import { blobValue } from './duckdbApi.ts';

/**
 * Stored estimator states (risk_ewma_state, loss_sigma_state) keep their doubles as one
 * BLOB of little-endian IEEE 754 values, so the numbers come back bit for bit.
 */

export function float64Blob(values: Float64Array): DuckDBBlobValue {
  const bytes = new Uint8Array(values.length * 8);
  const view = new DataView(bytes.buffer);
  for (let i = 0; i < values.length; i++) view.setFloat64(i * 8, values[i], true);
  return blobValue(bytes);
}

/** The `count` doubles of such a BLOB; a BLOB of another length is a fault, named with `what`. */
export function float64sOf(blob: DuckDBBlobValue, count: number, what: string): Float64Array {
  const bytes = blob.bytes;
  if (bytes.byteLength !== count * 8) throw new Error(`${what}: ${bytes.byteLength} bytes where ${count} doubles take ${count * 8}`);
  const view = new DataView(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  const values = new Float64Array(count);
  for (let i = 0; i < count; i++) values[i] = view.getFloat64(i * 8, true);
  return values;
}
