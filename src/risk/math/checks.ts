/**
 * Precondition checks shared by the math files. They throw a plain Error naming the
 * function and the argument: a wrong shape here is a programming fault of the
 * caller, not bad input data, so it is not a Rejection.
 */

export function requireLength(fn: string, name: string, actual: number, expected: number): void {
  if (actual !== expected) {
    throw new Error(`${fn}: ${name} has length ${actual}, expected ${expected}`);
  }
}

export function requireInteger(fn: string, name: string, value: number, min: number): void {
  if (!Number.isInteger(value) || value < min) {
    throw new Error(`${fn}: ${name} must be an integer >= ${min}, got ${value}`);
  }
}

/** Strictly between 0 and 1, as a decay factor or a confidence level must be. */
export function requireOpenUnit(fn: string, name: string, value: number): void {
  if (!(value > 0 && value < 1)) {
    throw new Error(`${fn}: ${name} must be in (0, 1), got ${value}`);
  }
}

export function requirePositive(fn: string, name: string, value: number): void {
  if (!(value > 0) || !Number.isFinite(value)) {
    throw new Error(`${fn}: ${name} must be a positive finite number, got ${value}`);
  }
}

export function requireNonNegative(fn: string, name: string, value: number): void {
  if (!(value >= 0) || !Number.isFinite(value)) {
    throw new Error(`${fn}: ${name} must be a non-negative finite number, got ${value}`);
  }
}

/** Every index in [0, bound), so a typed-array read never silently yields undefined. */
export function requireIndices(fn: string, name: string, idx: Int32Array, bound: number): void {
  for (let a = 0; a < idx.length; a++) {
    const i = idx[a];
    if (i < 0 || i >= bound) {
      throw new Error(`${fn}: ${name}[${a}] = ${i} is outside 0..${bound - 1}`);
    }
  }
}
