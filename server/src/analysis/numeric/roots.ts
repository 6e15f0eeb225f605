/**
 * Root finding on a bracket: bisection, Illinois (modified regula falsi), and the inverse of a monotone
 * function built on bisection.
 */
import type { RealFn } from "../../loss-model.js";

/**
 * Bisection for a root of f on [a, b] where f(a) and f(b) have opposite signs (or one is zero).
 * Returns null when the bracket is invalid.
 */
export function bisect(f: (x: number) => number, a: number, b: number, tol = 1e-14, maxIter = 200): number | null {
  let fa = f(a);
  const fb = f(b);
  if (Number.isNaN(fa) || Number.isNaN(fb)) return null;
  if (fa === 0) return a;
  if (fb === 0) return b;
  if (Math.sign(fa) === Math.sign(fb)) return null;
  for (let i = 0; i < maxIter; i++) {
    const m = 0.5 * (a + b);
    const fm = f(m);
    if (fm === 0 || Math.abs(b - a) <= tol * (1 + Math.abs(m))) return m;
    if (Math.sign(fm) === Math.sign(fa)) {
      a = m;
      fa = fm;
    } else {
      b = m;
    }
  }
  return 0.5 * (a + b);
}

/**
 * Illinois (modified regula falsi) root finding for g on [a, b] with g(a) ≤ 0 ≤ g(b) (g non-decreasing
 * in the intended use). Converges superlinearly for smooth g and never leaves the bracket; bounded by
 * `maxIter`. Returns the bracket end where |g| is smallest when the tolerance is not reached.
 */
export function findRootBracketed(g: RealFn, a: number, b: number, xTol = 1e-14, maxIter = 100): number {
  let ga = g(a);
  let gb = g(b);
  if (ga === 0) return a;
  if (gb === 0) return b;
  if (!(ga < 0 && gb > 0)) return Math.abs(ga) <= Math.abs(gb) ? a : b;
  let side = 0;
  for (let i = 0; i < maxIter && b - a > xTol * (1 + Math.abs(a)); i++) {
    let x = (a * gb - b * ga) / (gb - ga);
    // Fall back to bisection when the secant step lands on (or outside) the bracket through rounding.
    if (!(x > a && x < b)) x = 0.5 * (a + b);
    const gx = g(x);
    if (gx === 0) return x;
    if (gx < 0) {
      a = x;
      ga = gx;
      if (side === -1) gb /= 2;
      side = -1;
    } else {
      b = x;
      gb = gx;
      if (side === 1) ga /= 2;
      side = 1;
    }
    // Every fifth step bisects, so a pathological (e.g. piecewise-flat) g still shrinks the bracket.
    if (i % 5 === 4) {
      const m = 0.5 * (a + b);
      const gm = g(m);
      if (gm === 0) return m;
      if (gm < 0) {
        a = m;
        ga = gm;
      } else {
        b = m;
        gb = gm;
      }
      side = 0;
    }
  }
  return Math.abs(ga) <= Math.abs(gb) ? a : b;
}

/**
 * Inverse of a strictly monotone function f on [lo, hi] at y, by bisection; clamps to the nearer end
 * when y lies outside f's range there.
 */
export function invertMonotone(f: (x: number) => number, y: number, lo: number, hi: number): number {
  const flo = f(lo);
  const fhi = f(hi);
  const increasing = fhi >= flo;
  if (increasing ? y <= flo : y >= flo) return lo;
  if (increasing ? y >= fhi : y <= fhi) return hi;
  const root = bisect((x) => f(x) - y, lo, hi, 1e-15, 200);
  return root ?? NaN;
}
