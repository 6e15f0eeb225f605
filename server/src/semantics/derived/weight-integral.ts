/**
 * The partial losses of a weight function in closed form (`integrateWeight`), and the printed partial
 * losses a hover or a quick fix offers (`partialsFromWeight`, `completePartial`).
 *
 * Nothing throws out of the exported functions: `integrateWeight` returns a reason instead.
 */
import type { Expr } from "../../syntax/ast.js";
import { evalConstant } from "../compile.js";
import { call, dependsOn, name, num, op, simplify } from "../symbolic.js";
import { polyAdd, polyDivide, polyEval, polyMul, polyScale, trim, type Poly } from "./polynomial.js";
import { powerOf, show, signedTerms, sumExpr } from "./pretty.js";
import { weightFromPartials } from "./savage.js";

// ---------------------------------------------------------------------------------------------------
// Partial losses of a weight in closed form: l1(q) = ∫_q^1 (1−c)·w(c) dc and l0(q) = ∫_0^q c·w(c) dc
// (Reid & Williamson 2010, "Composite Binary Losses", JMLR 11, Thm 6 eq. (5); Shuford, Albert &
// Massengill 1966, Psychometrika 31).
//
// Only weights of the form P(q)·q^a·(1−q)^b with a polynomial P and integer exponents a, b are
// integrated: such integrands split by partial fractions into a polynomial plus powers of 1/c and
// 1/(1−c), whose antiderivatives are polynomials, powers and logarithms. Anything else (fractional
// powers such as the Beta(½,½) weight, transcendental weights, free parameters) is refused with a reason.
// Each integral is expanded around the endpoint where it vanishes (powers of 1−q for l1, of q for l0),
// so values near that endpoint keep their relative accuracy instead of cancelling.

/** Coefficients below this fraction of the largest one are rounding residue of the double-precision partial fractions. */
export const COEFF_REL_TOL = 1e-12;
/** Largest integer exponent handled (bounds the polynomial degree and the work). */
const MAX_DEGREE = 64;
/** Tolerance for reading a baked exponent as an integer (the defaults are typed-in decimals). */
const INTEGER_TOL = 1e-12;

/** P(x)·x^a·(1−x)^b; `c[k]` is the coefficient of x^k. */
interface Laurent {
  c: Poly;
  a: number;
  b: number;
}

/** The partial losses of a weight, or why the integrator cannot build them. */
export type WeightIntegral = { ok: true; l1: Expr; l0: Expr } | { ok: false; reason: string };

class NotElementary extends Error {}

function boundedMul(p: Poly, r: Poly): Poly {
  if (p.length + r.length - 2 > MAX_DEGREE) throw new NotElementary(`the weight's polynomial degree exceeds ${MAX_DEGREE}`);
  return polyMul(p, r);
}

function polyPow(p: Poly, n: number): Poly {
  let out = [1];
  for (let i = 0; i < n; i++) out = boundedMul(out, p);
  return out;
}

const ONE_MINUS_X = [1, -1];

/** Coefficients of p(1 − u) in u. */
function polyReflect(p: Poly): Poly {
  let out = [0];
  let power = [1];
  for (const v of p) {
    out = polyAdd(out, polyScale(power, v));
    power = boundedMul(power, ONE_MINUS_X);
  }
  return out;
}

/** Moves factors x and (1−x) out of P into the exponents, so a pure monomial P becomes a constant. */
function normaliseLaurent(t: Laurent): Laurent {
  let c = trim(t.c);
  let a = t.a;
  let b = t.b;
  const scale = () => Math.max(...c.map(Math.abs));
  while (c.length > 1 && Math.abs(c[0]!) <= COEFF_REL_TOL * scale()) {
    c = c.slice(1);
    a++;
  }
  // Synthetic division by (1 − x) while P(1) vanishes.
  while (c.length > 1 && Math.abs(polyEval(c, 1)) <= COEFF_REL_TOL * scale() * c.length) {
    const r = polyReflect(c); // P(1 − u): its constant term is P(1) ≈ 0, so divide by u.
    c = polyReflect(r.slice(1));
    b++;
  }
  return { c, a, b };
}

function lAdd(s: Laurent, t: Laurent): Laurent {
  const a = Math.min(s.a, t.a);
  const b = Math.min(s.b, t.b);
  const lift = (u: Laurent) => boundedMul(boundedMul(u.c, polyPow([0, 1], u.a - a)), polyPow(ONE_MINUS_X, u.b - b));
  return normaliseLaurent({ c: polyAdd(lift(s), lift(t)), a, b });
}

const lMul = (s: Laurent, t: Laurent): Laurent => normaliseLaurent({ c: boundedMul(s.c, t.c), a: s.a + t.a, b: s.b + t.b });

function lReciprocal(t: Laurent): Laurent {
  const n = normaliseLaurent(t);
  if (n.c.length !== 1 || n.c[0] === 0) throw new NotElementary("the weight divides by a polynomial with roots other than 0 and 1");
  return { c: [1 / n.c[0]!], a: -n.a, b: -n.b };
}

function lPower(t: Laurent, n: number): Laurent {
  if (Math.abs(n) > MAX_DEGREE) throw new NotElementary(`the exponent ${n} is too large`);
  const base = n < 0 ? lReciprocal(t) : normaliseLaurent(t);
  const k = Math.abs(n);
  return normaliseLaurent({ c: polyPow(base.c, k), a: base.a * k, b: base.b * k });
}

function asInteger(v: number, what: string): number {
  const r = Math.round(v);
  if (Math.abs(v - r) > INTEGER_TOL) throw new NotElementary(`${what} ${v} is not an integer`);
  return r;
}

/** Reads an expression in `x` as P(x)·x^a·(1−x)^b. */
function toLaurent(e: Expr, x: string): Laurent {
  if (!dependsOn(e, x)) {
    const v = evalConstant(e);
    if (v === null || !Number.isFinite(v)) throw new NotElementary("a constant part of the weight is not a finite number");
    return { c: [v], a: 0, b: 0 };
  }
  switch (e.kind) {
    case "name":
      return { c: [1], a: 1, b: 0 };
    case "paren":
      return toLaurent(e.inner, x);
    case "unary":
      if (e.op === "-") {
        const t = toLaurent(e.operand, x);
        return { ...t, c: polyScale(t.c, -1) };
      }
      if (e.op === "+") return toLaurent(e.operand, x);
      break;
    case "binary": {
      if (e.op === "+" || e.op === "-") {
        const r = toLaurent(e.right, x);
        return lAdd(toLaurent(e.left, x), e.op === "+" ? r : { ...r, c: polyScale(r.c, -1) });
      }
      if (e.op === "*") return lMul(toLaurent(e.left, x), toLaurent(e.right, x));
      if (e.op === "/") return lMul(toLaurent(e.left, x), lReciprocal(toLaurent(e.right, x)));
      if (e.op === "^") return laurentPower(e.left, e.right, x);
      break;
    }
    case "call":
      if (e.callee === "pow" && e.args.length === 2) return laurentPower(e.args[0]!, e.args[1]!, x);
      if (e.callee === "sqrt") throw new NotElementary("the weight has a square root (a fractional power)");
      throw new NotElementary(`the weight uses \`${e.callee}\`, which the integrator does not integrate`);
    case "if":
      throw new NotElementary("the weight is piecewise (`if … then … else`)");
    default:
      break;
  }
  throw new NotElementary("the weight is not a polynomial or simple rational function of q");
}

function laurentPower(base: Expr, exponent: Expr, x: string): Laurent {
  if (dependsOn(exponent, x)) throw new NotElementary("the exponent depends on q");
  const v = evalConstant(exponent);
  if (v === null || !Number.isFinite(v)) throw new NotElementary("an exponent is not a finite number");
  return lPower(toLaurent(base, x), asInteger(v, "the exponent"));
}

const binom = (n: number, k: number): number => {
  let r = 1;
  for (let i = 1; i <= k; i++) r = (r * (n - k + i)) / i;
  return r;
};

/** First `order` coefficients of p(x)/(1−x)^m as a power series in x. */
function seriesOverOneMinus(p: Poly, m: number, order: number): Poly {
  const out: Poly = [];
  for (let k = 0; k < order; k++) {
    let s = 0;
    for (let j = 0; j <= k && j < p.length; j++) s += p[j]! * binom(m + k - j - 1, k - j);
    out.push(s);
  }
  return out;
}

/**
 * Partial fractions of N(x)/(x^A·(1−x)^B): a polynomial R, coefficients alpha[i] of 1/x^i and beta[j]
 * of 1/(1−x)^j (index 0 unused).
 */
function partialFractions(t: Laurent): { r: Poly; alpha: number[]; beta: number[] } {
  const A = Math.max(0, -t.a);
  const B = Math.max(0, -t.b);
  const N = boundedMul(boundedMul(t.c, polyPow([0, 1], Math.max(0, t.a))), polyPow(ONE_MINUS_X, Math.max(0, t.b)));
  const alpha = new Array<number>(A + 1).fill(0);
  const beta = new Array<number>(B + 1).fill(0);
  seriesOverOneMinus(N, B, A).forEach((s, k) => (alpha[A - k] = s));
  seriesOverOneMinus(polyReflect(N), A, B).forEach((s, k) => (beta[B - k] = s));
  let rest = N;
  for (let i = 1; i <= A; i++) rest = polyAdd(rest, polyScale(boundedMul(polyPow([0, 1], A - i), polyPow(ONE_MINUS_X, B)), -alpha[i]!));
  for (let j = 1; j <= B; j++) rest = polyAdd(rest, polyScale(boundedMul(polyPow([0, 1], A), polyPow(ONE_MINUS_X, B - j)), -beta[j]!));
  const { quotient, remainder } = polyDivide(rest, boundedMul(polyPow([0, 1], A), polyPow(ONE_MINUS_X, B)));
  const scale = Math.max(1e-300, ...N.map(Math.abs));
  if (remainder.some((v) => Math.abs(v) > 1e-9 * scale)) throw new NotElementary("the partial-fraction split did not close (internal rounding)");
  return { r: quotient, alpha, beta };
}

type Term = { coef: number; factor: Expr | null };

/** ∫_q^1 of the integrand (the l1 form): finite at 1 only without 1/(1−c)^j terms. */
function integrateToOne(t: Laurent, q: Expr): Expr {
  const { r, alpha, beta } = partialFractions(t);
  const scale = Math.max(...r.map(Math.abs), ...alpha.map(Math.abs), ...beta.map(Math.abs), 1e-300);
  if (beta.some((v) => Math.abs(v) > COEFF_REL_TOL * scale)) throw new NotElementary("∫_q^1 (1−c)·w(c) dc diverges at c = 1 (the loss would not be regular)");
  const u: Expr = op("-", num(1), q);
  // ∫_q^1 R(c) dc = Σ r̃_k (1−q)^(k+1)/(k+1) with R(1−u) = Σ r̃_k u^k.
  const terms: Term[] = polyReflect(r).map((v, k) => ({ coef: v / (k + 1), factor: powerOf(u, k + 1) }));
  alpha.forEach((v, i) => {
    if (i === 0) return;
    if (i === 1) terms.push({ coef: -v, factor: call("ln", q) });
    // ∫_q^1 c^(−i) dc = (q^(1−i) − 1)/(i − 1).
    else terms.push({ coef: v / (i - 1), factor: op("^", q, num(1 - i)) }, { coef: -v / (i - 1), factor: null });
  });
  return sumExpr(signedTerms(terms, COEFF_REL_TOL * scale));
}

/** ∫_0^q of the integrand (the l0 form): finite at 0 only without 1/c^i terms. */
function integrateFromZero(t: Laurent, q: Expr): Expr {
  const { r, alpha, beta } = partialFractions(t);
  const scale = Math.max(...r.map(Math.abs), ...alpha.map(Math.abs), ...beta.map(Math.abs), 1e-300);
  if (alpha.some((v) => Math.abs(v) > COEFF_REL_TOL * scale)) throw new NotElementary("∫_0^q c·w(c) dc diverges at c = 0 (the loss would not be regular)");
  const terms: Term[] = r.map((v, k) => ({ coef: v / (k + 1), factor: powerOf(q, k + 1) }));
  const u: Expr = op("-", num(1), q);
  beta.forEach((v, j) => {
    if (j === 0) return;
    if (j === 1) terms.push({ coef: -v, factor: call("ln", u) });
    // ∫_0^q (1−c)^(−j) dc = ((1−q)^(1−j) − 1)/(j − 1).
    else terms.push({ coef: v / (j - 1), factor: op("^", u, num(1 - j)) }, { coef: -v / (j - 1), factor: null });
  });
  return sumExpr(signedTerms(terms, COEFF_REL_TOL * scale));
}

function explainFailure(err: unknown): string {
  if (err instanceof NotElementary) return err.message;
  return `internal error while integrating the weight: ${err instanceof Error ? err.message : String(err)}`;
}

/**
 * Integrates a weight in variable `x` (parameters already substituted: a free name is refused) to both
 * partial losses, l1(q) = ∫_q^1 (1−c)w(c)dc and l0(q) = ∫_0^q c·w(c)dc (Reid & Williamson 2010,
 * "Composite Binary Losses", JMLR 11, Thm 6 eq. (5)), or explains why it cannot. Never throws.
 */
export function integrateWeight(w: Expr, x = "q"): WeightIntegral {
  try {
    const t = toLaurent(w, x);
    const q = name(x);
    const l1 = integrateToOne(lMul(t, { c: [1], a: 0, b: 1 }), q);
    const l0 = integrateFromZero(lMul(t, { c: [1], a: 1, b: 0 }), q);
    return { ok: true, l1, l0 };
  } catch (err) {
    return { ok: false, reason: explainFailure(err) };
  }
}

/** Sample points for the sign check of a weight function: an even grid inside (0, 1) (common practice). */
const SIGN_GRID = Array.from({ length: 99 }, (_, i) => (i + 1) / 100);
/** A weight this far below zero at a grid point counts as negative (rounding in exact small arithmetic is far smaller). */
const WEIGHT_TOL = 1e-9;

/** The weight read as P·x^a·(1−x)^b when it is non-negative on the sign grid (a proper loss), else null. */
function readNonNegativeWeight(w: Expr, x: string): Laurent | null {
  let t: Laurent;
  try {
    t = toLaurent(simplify(w), x);
  } catch {
    return null;
  }
  for (const c of SIGN_GRID) {
    const value = polyEval(t.c, c) * c ** t.a * (1 - c) ** t.b;
    if (!Number.isFinite(value) || value < -WEIGHT_TOL) return null;
  }
  return t;
}

function printIntegral(t: Laurent, target: "l1" | "l0", x: string): string | null {
  try {
    const q = name(x);
    const e = target === "l1" ? integrateToOne(lMul(t, { c: [1], a: 0, b: 1 }), q) : integrateFromZero(lMul(t, { c: [1], a: 1, b: 0 }), q);
    return show(e);
  } catch {
    return null;
  }
}

/**
 * Both partial losses of a weight function, printed, where the integrator can build them and the weight
 * is non-negative (Reid & Williamson 2010, "Composite Binary Losses", JMLR 11, Thm 6); null for each one
 * it cannot build.
 */
export function partialsFromWeight(weight: Expr, q: string): { l1: string | null; l0: string | null } {
  const t = readNonNegativeWeight(weight, q);
  if (!t) return { l1: null, l0: null };
  return { l1: printIntegral(t, "l1", q), l0: printIntegral(t, "l0", q) };
}

/**
 * The missing partial loss from the derivative of the given one, printed, when the loss completed this way
 * is proper (w ≥ 0) and the integral has a closed form: the weight by stationarity, w = −l1'/(1−q) or
 * w = l0'/q (Reid & Williamson 2010, JMLR 11, Thm 1), then l0(q) = ∫_0^q c·w(c) dc or
 * l1(q) = ∫_q^1 (1−c)·w(c) dc (Thm 6; Shuford, Albert & Massengill 1966, Psychometrika 31). Null otherwise.
 */
export function completePartial(given: "l1" | "l0", dGiven: Expr, q: string): string | null {
  const w = weightFromPartials(given === "l1" ? dGiven : null, given === "l0" ? dGiven : null, q);
  const weight = given === "l1" ? w.fromL1 : w.fromL0;
  const t = weight ? readNonNegativeWeight(weight, q) : null;
  return t ? printIntegral(t, given === "l1" ? "l0" : "l1", q) : null;
}
