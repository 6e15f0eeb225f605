/**
 * Numeric primitives shared by every analysis: named tolerances, the one `nearlyEqual`, seeded sampling,
 * 1-D minimisation, root finding and adaptive quadrature. Everything is a pure function of numbers.
 */

/** Relative tolerance for comparing two evaluations of the same closed form (a few ulps of double rounding through ~1e3 operations). */
export const REL_TOL = 1e-9;
/** Absolute tolerance for values that should be exactly zero after cancellation of O(1) terms. */
export const ABS_TOL = 1e-12;

/**
 * Compares two numbers with a relative and an absolute tolerance.
 * NaN equals nothing; two infinities are equal when they have the same sign.
 */
export function nearlyEqual(a: number, b: number, relTol = REL_TOL, absTol = ABS_TOL): boolean {
  if (Number.isNaN(a) || Number.isNaN(b)) return false;
  if (a === b) return true;
  if (!Number.isFinite(a) || !Number.isFinite(b)) return false;
  const diff = Math.abs(a - b);
  if (diff <= absTol) return true;
  return diff <= relTol * Math.max(Math.abs(a), Math.abs(b));
}

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

// Gauss–Kronrod 7-15 nodes and weights on [-1, 1] (standard published values, as in QUADPACK's qk15).
const GK_X = [
  0.991455371120813, 0.949107912342759, 0.864864423359769, 0.741531185599394, 0.586087235467691,
  0.405845151377397, 0.207784955007898, 0.0,
];
const GK_WK = [
  0.022935322010529, 0.063092092629979, 0.104790010322250, 0.140653259715525, 0.169004726639267,
  0.190350578064785, 0.204432940075298, 0.209482141084728,
];
const GK_WG = [0.0, 0.129484966168870, 0.0, 0.279705391489277, 0.0, 0.381830050505119, 0.0, 0.417959183673469];

/**
 * One Gauss–Kronrod 7-15 panel with QUADPACK's error estimate (Piessens, de Doncker-Kapenga, Überhuber &
 * Kahaner 1983, "QUADPACK", routine qk15): the raw |K15 − G7| difference overstates the error of the
 * 15-point rule by orders of magnitude on smooth panels, so it is rescaled by the panel's mean absolute
 * deviation, resasc·min(1, (200·|K − G|/resasc)^1.5), and kept above the rounding floor of resabs.
 */
function gk15(f: (x: number) => number, a: number, b: number): { value: number; error: number } {
  const c = 0.5 * (a + b);
  const h = 0.5 * (b - a);
  const fc = f(c);
  let k = GK_WK[7]! * fc;
  let g = GK_WG[7]! * fc;
  let resabs = Math.abs(k);
  const f1 = new Array<number>(7);
  const f2 = new Array<number>(7);
  for (let i = 0; i < 7; i++) {
    const x = GK_X[i]!;
    const y1 = f(c - h * x);
    const y2 = f(c + h * x);
    f1[i] = y1;
    f2[i] = y2;
    k += GK_WK[i]! * (y1 + y2);
    g += GK_WG[i]! * (y1 + y2);
    resabs += GK_WK[i]! * (Math.abs(y1) + Math.abs(y2));
  }
  const mean = k * 0.5;
  let resasc = GK_WK[7]! * Math.abs(fc - mean);
  for (let i = 0; i < 7; i++) resasc += GK_WK[i]! * (Math.abs(f1[i]! - mean) + Math.abs(f2[i]! - mean));
  const absH = Math.abs(h);
  resasc *= absH;
  resabs *= absH;
  let error = Math.abs((k - g) * h);
  if (resasc !== 0 && error !== 0) error = resasc * Math.min(1, Math.pow((200 * error) / resasc, 1.5));
  const EPS = Number.EPSILON;
  if (resabs > Number.MIN_VALUE / (50 * EPS)) error = Math.max(50 * EPS * resabs, error);
  if (!Number.isFinite(k)) error = Infinity;
  return { value: k * h, error };
}

export interface Quadrature {
  value: number;
  error: number;
  /** False when the error target was not reached within the budget, or the integrand was not finite. */
  converged: boolean;
}

/**
 * Adaptive Gauss–Kronrod quadrature of f over [a, b]. Nodes never touch the endpoints, so integrable
 * endpoint singularities (w = 1/(q(1-q)) near 0 and 1) are handled by bisecting towards them.
 */
export function integrate(f: (x: number) => number, a: number, b: number, absTol = 1e-11, relTol = 1e-10, maxIntervals = 2000): Quadrature {
  if (a === b) return { value: 0, error: 0, converged: true };
  if (a > b) {
    const r = integrate(f, b, a, absTol, relTol, maxIntervals);
    return { value: -r.value, error: r.error, converged: r.converged };
  }
  interface Piece { a: number; b: number; value: number; error: number }
  const first = gk15(f, a, b);
  const pieces: Piece[] = [{ a, b, ...first }];
  let total = first.value;
  let err = first.error;
  let count = 1;
  while (err > Math.max(absTol, relTol * Math.abs(total)) && count < maxIntervals) {
    let worst = 0;
    for (let i = 1; i < pieces.length; i++) if (pieces[i]!.error > pieces[worst]!.error) worst = i;
    const p = pieces[worst]!;
    const m = 0.5 * (p.a + p.b);
    if (m <= p.a || m >= p.b) break;
    const left = gk15(f, p.a, m);
    const right = gk15(f, m, p.b);
    total += left.value + right.value - p.value;
    err += left.error + right.error - p.error;
    pieces[worst] = { a: p.a, b: m, ...left };
    pieces.push({ a: m, b: p.b, ...right });
    count++;
  }
  const converged = Number.isFinite(total) && err <= Math.max(absTol, relTol * Math.abs(total)) * 10;
  return { value: total, error: err, converged };
}

/** Central finite difference with a step scaled to x (used by tests and by checks without a symbolic derivative). */
export function centralDiff(f: (x: number) => number, x: number, h = 1e-6): number {
  const step = h * Math.max(1, Math.abs(x));
  return (f(x + step) - f(x - step)) / (2 * step);
}

/** Formats a number for messages: short, never "NaN" without saying so. */
export function fmt(x: number, digits = 6): string {
  if (Number.isNaN(x)) return "undefined (NaN)";
  if (x === Infinity) return "∞";
  if (x === -Infinity) return "−∞";
  if (x === 0) return "0";
  const a = Math.abs(x);
  if (a >= 1e-4 && a < 1e6) return String(Number(x.toPrecision(digits)));
  return x.toExponential(Math.max(0, digits - 1)).replace("e+", "e");
}
