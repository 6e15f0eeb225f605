/**
 * Seeded pseudo-random sampling and the deterministic grids the analyses sample on: equally spaced points,
 * a probability grid dense at both ends of (0,1), and the tabulation nodes of `UnitIntegral`.
 */

/** A small, fast, seeded pseudo-random generator (mulberry32): the same seed gives the same samples. */
export function seededRandom(seed: number): () => number {
  let a = seed >>> 0;
  return () => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

/** n+1 equally spaced points from a to b inclusive. */
export function linspace(a: number, b: number, n: number): number[] {
  const out = new Array<number>(n + 1);
  for (let i = 0; i <= n; i++) out[i] = a + ((b - a) * i) / n;
  return out;
}

/**
 * Points on (0,1) that are dense near both endpoints and uniform in the middle: a uniform grid plus
 * geometric sequences 10^-k and 1 - 10^-k, so endpoint behaviour (singular weights) is sampled.
 */
export function probabilityGrid(n: number, minExponent = 8): number[] {
  const pts = new Set<number>();
  for (let i = 1; i < n; i++) pts.add(i / n);
  for (let k = 2; k <= minExponent; k++) {
    for (const m of [1, 3]) {
      const x = m * Math.pow(10, -k);
      pts.add(x);
      pts.add(1 - x);
    }
  }
  return [...pts].sort((a, b) => a - b);
}

/**
 * Nodes on (0,1) for tabulation: geometric towards both endpoints (down to 1e-12 from each end) and
 * uniform in the middle, so integrands singular at an endpoint are resolved cell by cell.
 */
export function tabulationNodes(): number[] {
  const pts: number[] = [];
  // Quarter-decade steps from 1e-12 up to 1e-2 resolve power-law endpoint behaviour.
  for (let k = 48; k > 8; k--) pts.push(Math.pow(10, -k / 4));
  for (let i = 1; i < 100; i++) pts.push(i / 100);
  for (let k = 9; k <= 48; k++) pts.push(1 - Math.pow(10, -k / 4));
  return [...new Set(pts)].sort((a, b) => a - b);
}
