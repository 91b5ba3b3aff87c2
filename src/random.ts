/**
 * Seeded pseudo-random numbers. Every random choice in cairn takes an `Rng`
 * parameter; `--seed` creates one at the CLI edge. Never use Math.random.
 */

/** A source of uniform numbers in [0, 1). */
export type Rng = () => number;

/**
 * Mulberry32 generator (Tommy Ettinger's public-domain 32-bit generator):
 * fast, 2^32 period, good enough for sampling hypotheses and synthetic data.
 */
export function createRng(seed: number): Rng {
  let a = (Math.floor(seed) >>> 0) ^ 0x9e3779b9;
  return () => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

/** Integer uniform in [0, n). */
export function randomInt(rng: Rng, n: number): number {
  return Math.floor(rng() * n);
}

/** Standard normal by the Box-Muller transform (Box & Muller 1958). */
export function randomNormal(rng: Rng): number {
  let u = rng();
  while (u <= Number.MIN_VALUE) u = rng();
  const v = rng();
  return Math.sqrt(-2 * Math.log(u)) * Math.cos(2 * Math.PI * v);
}

/** Fisher-Yates shuffle of a copy (Knuth, TAOCP vol. 2, Algorithm P). */
export function shuffle<T>(items: readonly T[], rng: Rng): T[] {
  const out = items.slice();
  for (let i = out.length - 1; i > 0; i--) {
    const j = randomInt(rng, i + 1);
    const tmp = out[i];
    out[i] = out[j];
    out[j] = tmp;
  }
  return out;
}

/** A uniformly random rotation matrix in 2-D or 3-D (3-D: from a unit quaternion, Shoemake 1992). */
export function randomRotation(rng: Rng, dim: 2 | 3): number[][] {
  if (dim === 2) {
    const a = rng() * 2 * Math.PI;
    return [
      [Math.cos(a), -Math.sin(a)],
      [Math.sin(a), Math.cos(a)],
    ];
  }
  const u1 = rng(), u2 = rng(), u3 = rng();
  const q0 = Math.sqrt(1 - u1) * Math.sin(2 * Math.PI * u2);
  const q1 = Math.sqrt(1 - u1) * Math.cos(2 * Math.PI * u2);
  const q2 = Math.sqrt(u1) * Math.sin(2 * Math.PI * u3);
  const q3 = Math.sqrt(u1) * Math.cos(2 * Math.PI * u3);
  const [w, x, y, z] = [q0, q1, q2, q3];
  return [
    [1 - 2 * (y * y + z * z), 2 * (x * y - z * w), 2 * (x * z + y * w)],
    [2 * (x * y + z * w), 1 - 2 * (x * x + z * z), 2 * (y * z - x * w)],
    [2 * (x * z - y * w), 2 * (y * z + x * w), 1 - 2 * (x * x + y * y)],
  ];
}
