/**
 * One-dimensional minimisation: golden-section search, and two global searches (grid scan plus
 * golden-section refinement) for multi-modal functions and kinks.
 */
import type { RealFn } from "../../loss-model.js";
import { linspace } from "./sampling.js";

const INV_PHI = (Math.sqrt(5) - 1) / 2;

export interface Minimum {
  x: number;
  fx: number;
}

/**
 * Golden-section search for a minimum of f on [a, b] (exact for unimodal f, a local minimum otherwise).
 * Non-finite values are treated as +Infinity so the search walks away from them.
 */
export function goldenMin(f: (x: number) => number, a: number, b: number, tol = 1e-12, maxIter = 200): Minimum {
  const g = (x: number) => {
    const y = f(x);
    return Number.isNaN(y) ? Infinity : y;
  };
  let c = b - INV_PHI * (b - a);
  let d = a + INV_PHI * (b - a);
  let fc = g(c);
  let fd = g(d);
  for (let i = 0; i < maxIter && Math.abs(b - a) > tol * (1 + Math.abs(a) + Math.abs(b)); i++) {
    if (fc <= fd) {
      b = d;
      d = c;
      fd = fc;
      c = b - INV_PHI * (b - a);
      fc = g(c);
    } else {
      a = c;
      c = d;
      fc = fd;
      d = a + INV_PHI * (b - a);
      fd = g(d);
    }
  }
  const fa = g(a);
  const fb = g(b);
  let best: Minimum = fc <= fd ? { x: c, fx: fc } : { x: d, fx: fd };
  if (fa < best.fx) best = { x: a, fx: fa };
  if (fb < best.fx) best = { x: b, fx: fb };
  return best;
}

/**
 * Global minimisation on [a, b]: a grid scan followed by golden-section refinement around the best few
 * grid cells, so multi-modal functions and kinks are handled without relying on unimodality.
 */
export function globalMin(f: (x: number) => number, a: number, b: number, gridSize = 200, refine = 3): Minimum {
  const xs = linspace(a, b, gridSize);
  const ys = xs.map((x) => {
    const y = f(x);
    return Number.isNaN(y) ? Infinity : y;
  });
  const order = ys.map((_, i) => i).sort((i, j) => ys[i]! - ys[j]!);
  let best: Minimum = { x: xs[order[0]!]!, fx: ys[order[0]!]! };
  for (const i of order.slice(0, refine)) {
    const lo = xs[Math.max(0, i - 1)]!;
    const hi = xs[Math.min(xs.length - 1, i + 1)]!;
    const m = goldenMin(f, lo, hi);
    if (m.fx < best.fx) best = m;
  }
  return best;
}

/**
 * Minimum of g over [a, b] robust to several basins: a scan of `scan` points, then golden-section
 * refinement of the best `refine` local minima of the scan (and the two ends, which are kept as they are).
 */
export function robustMin(g: RealFn, a: number, b: number, scan = 64, refine = 3, tol = 1e-10): { x: number; fx: number } {
  if (!(b > a)) return { x: a, fx: g(a) };
  const xs = new Array<number>(scan + 1);
  const ys = new Array<number>(scan + 1);
  for (let i = 0; i <= scan; i++) {
    xs[i] = a + ((b - a) * i) / scan;
    const y = g(xs[i]!);
    ys[i] = Number.isNaN(y) ? Infinity : y;
  }
  const locals: number[] = [];
  for (let i = 0; i <= scan; i++) {
    const l = i > 0 ? ys[i - 1]! : Infinity;
    const r = i < scan ? ys[i + 1]! : Infinity;
    if (ys[i]! <= l && ys[i]! <= r) locals.push(i);
  }
  locals.sort((i, j) => ys[i]! - ys[j]!);
  let best = { x: xs[0]!, fx: ys[0]! };
  for (let i = 0; i <= scan; i++) if (ys[i]! < best.fx) best = { x: xs[i]!, fx: ys[i]! };
  for (const i of locals.slice(0, refine)) {
    const lo = xs[Math.max(0, i - 1)]!;
    const hi = xs[Math.min(scan, i + 1)]!;
    const m = goldenMin(g, lo, hi, tol);
    if (m.fx < best.fx) best = m;
  }
  return best;
}
