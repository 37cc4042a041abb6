/**
 * A small seeded generator, so the same seed gives the same scenario files on every
 * machine (Math.random cannot be seeded). mulberry32 for uniforms: a 32-bit state is
 * plenty for a few hundred thousand draws of a demo.
 */
export interface Random {
  /** Uniform on (0, 1), never exactly 0 (Box-Muller takes its logarithm). */
  uniform(): number;
  /** Standard normal. */
  normal(): number;
}

export function createRandom(seed: number): Random {
  if (!Number.isInteger(seed)) throw new Error(`seed must be an integer, got ${seed}`);
  let state = seed >>> 0;
  const uniform = (): number => {
    state = (state + 0x6d2b79f5) >>> 0;
    let t = state;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return (((t ^ (t >>> 14)) >>> 0) + 0.5) / 4294967296;
  };
  // Box-Muller gives two independent normals per pair of uniforms; keep the second.
  let spare: number | null = null;
  const normal = (): number => {
    if (spare !== null) {
      const out = spare;
      spare = null;
      return out;
    }
    const radius = Math.sqrt(-2 * Math.log(uniform()));
    const angle = 2 * Math.PI * uniform();
    spare = radius * Math.sin(angle);
    return radius * Math.cos(angle);
  };
  return { uniform, normal };
}
