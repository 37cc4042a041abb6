import * as ss from 'simple-statistics';
import { describe, expect, it } from 'vitest';
import { acklamLowerQuantile, normalCdf, normalPdf, normalQuantile } from '../../../src/risk/math/normal.ts';

// Reference values printed once with mpmath 1.3 (general-purpose arbitrary-precision
// library) at 40 digits: mpmath.ncdf(x), mpmath.npdf(x), and for quantiles the root of
// ncdf(x) = p with p the exact double; rounded to 17 significant digits.
const CDF_REFERENCE: [number, number][] = [
  [-37.5, 4.6053530095819548e-308],
  [-20, 2.7536241186062337e-89],
  [-10, 7.6198530241605261e-24],
  [-8, 6.2209605742717841e-16],
  [-5, 2.8665157187919391e-7],
  [-3, 1.3498980316300945e-3],
  [-2.5, 6.2096653257761352e-3],
  [-1.5, 6.6807201268858066e-2],
  [-1, 1.5865525393145705e-1],
  [-0.5, 3.085375387259869e-1],
  [0.25, 5.9870632568292372e-1],
  [1, 8.4134474606854295e-1],
  [2, 9.7724986805182079e-1],
  [3, 9.9865010196836991e-1],
  [6, 9.9999999901341235e-1],
];
const QUANTILE_REFERENCE: [number, number][] = [
  [1e-300, -37.047096299361199],
  [1e-100, -21.273453560965324],
  [1e-20, -9.2623400897984076],
  [1e-10, -6.3613409024040562],
  [1e-5, -4.2648907939228246],
  [0.001, -3.0902323061678135],
  [0.01, -2.3263478740408411],
  [0.025, -1.9599639845400542],
  [0.05, -1.6448536269514727],
  [0.1, -1.2815515655446004],
  [0.3, -0.52440051270804082],
  [0.9, 1.2815515655446006],
  [0.975, 1.9599639845400539],
  [0.99, 2.3263478740408408],
  [0.999, 3.0902323061678133],
];
const PDF_REFERENCE: [number, number][] = [
  [0, 0.39894228040143268],
  [1, 0.24197072451914335],
  [1.96, 0.058440944333451464],
  [2.3263478740408408, 0.026652142203458069],
  [-4, 0.00013383022576488535],
];

const relative = (actual: number, expected: number): number => Math.abs(actual - expected) / Math.abs(expected);

describe('normalQuantile', () => {
  it('gives the standard normal table values z_0.99 = 2.3263, z_0.975 = 1.9600, z_0.95 = 1.6449 (any statistics handbook table)', () => {
    expect(normalQuantile(0.99)).toBeCloseTo(2.3263, 4);
    expect(normalQuantile(0.975)).toBeCloseTo(1.96, 4);
    expect(normalQuantile(0.95)).toBeCloseTo(1.6449, 4);
    expect(normalQuantile(0.5)).toBe(0);
  });

  it('agrees with mpmath at 40 digits to 1e-14 relative, from p = 1e-300 to 0.999', () => {
    for (const [p, z] of QUANTILE_REFERENCE) expect(relative(normalQuantile(p), z), `p = ${p}`).toBeLessThan(1e-14);
  });

  it('round-trips: normalCdf(normalQuantile(p)) = p over 1e-300 .. 1 - 1e-3, to 1e-14 plus what one rounding of z costs', () => {
    // d(ln p) = (phi(z) / p) dz, about |z| dz in the tail: one unit of rounding in z
    // (2.2e-16 |z|) moves p by about z^2 * 2.2e-16 relative, 3e-13 at p = 1e-300
    const tolerance = (z: number): number => 1e-14 + 4 * 2.2e-16 * z * z;
    for (let e = -300; e <= -1; e += 0.37) {
      const p = 10 ** e;
      const z = normalQuantile(p);
      expect(relative(normalCdf(z), p), `p = ${p}`).toBeLessThan(tolerance(z));
    }
    for (let p = 0.001; p < 0.999; p += 0.0173) expect(relative(normalCdf(normalQuantile(p)), p), `p = ${p}`).toBeLessThan(1e-14);
  });

  it('is odd: normalQuantile(1 - p) = -normalQuantile(p) exactly where 1 - p is exact', () => {
    for (const p of [0.5, 0.25, 0.125, 0.01171875, 0.4375]) expect(normalQuantile(1 - p) + normalQuantile(p)).toBe(0);
  });

  it("starts from Acklam's approximation, whose own relative error stays below the published 1.15e-9", () => {
    // P. J. Acklam (2003) states a relative error below 1.15e-9 over (0, 1/2]
    let worst = 0;
    for (let e = -300; e <= -0.302; e += 0.05) {
      const p = 10 ** e;
      worst = Math.max(worst, relative(acklamLowerQuantile(p), normalQuantile(p)));
    }
    expect(worst).toBeLessThan(1.15e-9);
    expect(worst).toBeGreaterThan(1e-11); // the refinement step is not a no-op
  });

  it('is close to simple-statistics probit (an erf-inverse approximation, good to about 1e-3 relative)', () => {
    for (const p of [0.01, 0.05, 0.2, 0.7, 0.95, 0.99]) expect(relative(normalQuantile(p), ss.probit(p))).toBeLessThan(5e-3);
  });

  it('throws for p outside (0, 1)', () => {
    for (const p of [0, 1, -0.1, 1.5, Number.NaN]) expect(() => normalQuantile(p)).toThrow(/normalQuantile: p must be in \(0, 1\)/);
  });
});

describe('normalCdf', () => {
  it('agrees with mpmath at 40 digits to 1e-15 relative, from x = -37.5 to 6', () => {
    for (const [x, p] of CDF_REFERENCE) expect(relative(normalCdf(x), p), `x = ${x}`).toBeLessThan(1e-15);
  });

  it('agrees with the 4-decimal standard normal table of simple-statistics from -3.09 to 3.09', () => {
    for (let k = -309; k <= 309; k++) {
      const z = k / 100;
      expect(Math.abs(normalCdf(z) - ss.cumulativeStdNormalProbability(z)), `z = ${z}`).toBeLessThanOrEqual(5.01e-5);
    }
  });

  it('is continuous where it switches from the series to the continued fraction (|x| = 1)', () => {
    // the step across the seam must be the density times the step, to rounding
    for (const x of [1, -1]) {
      const seriesSide = normalCdf(x - 1e-9 * Math.sign(x));
      const fractionSide = normalCdf(x);
      expect(Math.abs(fractionSide - seriesSide - Math.sign(x) * normalPdf(x) * 1e-9)).toBeLessThan(1e-15);
    }
  });

  it('satisfies Phi(x) + Phi(-x) = 1 and handles the limits', () => {
    for (let x = 0; x < 8; x += 0.173) expect(normalCdf(x) + normalCdf(-x)).toBeCloseTo(1, 15);
    expect(normalCdf(-Infinity)).toBe(0);
    expect(normalCdf(Infinity)).toBe(1);
    expect(normalCdf(-40)).toBe(0);
    expect(Number.isNaN(normalCdf(Number.NaN))).toBe(true);
  });
});

describe('normalPdf', () => {
  it('agrees with mpmath (phi(0) = 1/sqrt(2 pi), phi(1.96) = 0.0584, phi(2.3263) = 0.0267 as in handbook tables)', () => {
    for (const [x, density] of PDF_REFERENCE) expect(relative(normalPdf(x), density), `x = ${x}`).toBeLessThan(1e-15);
    expect(normalPdf(1.96)).toBeCloseTo(0.0584, 4);
    expect(normalPdf(2.3263)).toBeCloseTo(0.0267, 4);
  });

  it('keeps relative accuracy in the far tail (x = 30.1, where x^2 / 2 = 453 carries rounding)', () => {
    // mpmath.npdf(30.1) at 40 digits
    expect(relative(normalPdf(30.1), 7.3002593842806107e-198)).toBeLessThan(1e-15);
    expect(normalPdf(Infinity)).toBe(0);
    expect(Number.isNaN(normalPdf(Number.NaN))).toBe(true);
  });
});
