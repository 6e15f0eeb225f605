/**
 * Sequence extrapolation: Aitken Δ² on the last three terms and its iterated form (Shanks).
 */

/** Aitken Δ² extrapolation of the last three terms of a sequence (the last term when it does not converge geometrically). */
export function aitkenLimit(seq: number[]): number {
  const n = seq.length;
  if (n < 3) return seq[n - 1] ?? NaN;
  const a = seq[n - 3]!;
  const b = seq[n - 2]!;
  const c = seq[n - 1]!;
  const d1 = b - a;
  const d2 = c - b;
  const denom = d2 - d1;
  if (d1 === 0 || d2 === 0 || !Number.isFinite(denom) || denom === 0) return c;
  const ratio = d2 / d1;
  // Only a geometric, shrinking correction is extrapolated; oscillation or growth keeps the last term.
  if (!(ratio > 0 && ratio < 0.95)) return c;
  const lim = c - (d2 * d2) / denom;
  return Number.isFinite(lim) ? lim : c;
}

/**
 * Iterated Aitken Δ² (Shanks) extrapolation: each pass removes one geometric error component, so a ladder
 * of 2k+1 terms handles k components (e.g. w(t) = λ + a·t + b·t² sampled at t = 10^{−i}).
 */
export function shanksLimit(seq: number[]): number {
  let cur = seq.slice();
  while (cur.length >= 3) {
    const next: number[] = [];
    for (let i = 0; i + 2 < cur.length; i++) next.push(aitkenLimit(cur.slice(i, i + 3)));
    cur = next;
  }
  return cur[cur.length - 1] ?? NaN;
}
