/** The typed arrays that grow by doubling as rows are appended. */
export type GrowableArray = Uint8Array | Int32Array | Float64Array;

/**
 * `a` itself when it holds `need` elements, else a copy of a[0 .. used - 1] in a new
 * array from `allocate` of at least `need` (doubling, so appends stay amortized O(1)).
 */
export function ensureCapacity<A extends GrowableArray>(a: A, used: number, need: number, allocate: (n: number) => A): A {
  if (need <= a.length) return a;
  let size = Math.max(1, a.length);
  while (size < need) size *= 2;
  const next = allocate(size);
  next.set(a.subarray(0, used) as never);
  return next;
}
