/**
 * Closed-form partial losses from a weight function, for code generation:
 * l1(q) = ∫_q^1 (1−c)·w(c) dc and l0(q) = ∫_0^q c·w(c) dc (Reid & Williamson 2010, "Composite Binary
 * Losses", JMLR 11, Thm 6 eq. (5)).
 *
 * Only weights of the form P(q)·q^a·(1−q)^b with a polynomial P and integer exponents a, b (after the
 * parameters are baked in) are integrated: such integrands split by partial fractions into a polynomial
 * plus powers of 1/c and 1/(1−c), whose antiderivatives are polynomials, powers and logarithms. Anything
 * else (fractional powers such as the Beta(½,½) weight, transcendental weights) is refused with a reason.
 * Each integral is expanded around the endpoint where it vanishes (powers of 1−q for l1, of q for l0),
 * so values near that endpoint keep their relative accuracy instead of cancelling.
 */
import type { Expr } from "../syntax/ast.js";
import { evalConstant } from "../semantics/compile.js";
import { call, dependsOn, name, num } from "../semantics/symbolic.js";

/** Coefficients below this fraction of the largest one are rounding residue of the double-precision partial fractions. */
export const COEFF_REL_TOL = 1e-12;
/** Largest integer exponent handled (bounds the polynomial degree and the work). */
const MAX_DEGREE = 64;
/** Tolerance for reading a baked exponent as an integer (the defaults are typed-in decimals). */
const INTEGER_TOL = 1e-12;

/** P(x)·x^a·(1−x)^b; `c[k]` is the coefficient of x^k. */
interface Laurent {
  c: number[];
  a: number;
  b: number;
}

export type WeightIntegral = { ok: true; l1: Expr; l0: Expr } | { ok: false; reason: string };

class NotElementary extends Error {}

const trim = (p: number[]): number[] => {
  const out = p.slice();
  while (out.length > 1 && out[out.length - 1] === 0) out.pop();
  return out.length === 0 ? [0] : out;
};

function polyAdd(p: number[], r: number[]): number[] {
  const out = new Array<number>(Math.max(p.length, r.length)).fill(0);
  p.forEach((v, i) => (out[i]! += v));
  r.forEach((v, i) => (out[i]! += v));
  return trim(out);
}

function polyMul(p: number[], r: number[]): number[] {
  if (p.length + r.length - 2 > MAX_DEGREE) throw new NotElementary(`the weight's polynomial degree exceeds ${MAX_DEGREE}`);
  const out = new Array<number>(p.length + r.length - 1).fill(0);
  p.forEach((u, i) => r.forEach((v, j) => (out[i + j]! += u * v)));
  return trim(out);
}

function polyPow(p: number[], n: number): number[] {
  let out = [1];
  for (let i = 0; i < n; i++) out = polyMul(out, p);
  return out;
}

const polyScale = (p: number[], s: number): number[] => trim(p.map((v) => v * s));
const polyEval = (p: number[], x: number): number => p.reduceRight((acc, v) => acc * x + v, 0);
const ONE_MINUS_X = [1, -1];

/** Coefficients of p(1 − u) in u. */
function polyReflect(p: number[]): number[] {
  let out = [0];
  let power = [1];
  for (const v of p) {
    out = polyAdd(out, polyScale(power, v));
    power = polyMul(power, ONE_MINUS_X);
  }
  return out;
}

/** Moves factors x and (1−x) out of P into the exponents, so a pure monomial P becomes a constant. */
function normalise(t: Laurent): Laurent {
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

function add(s: Laurent, t: Laurent): Laurent {
  const a = Math.min(s.a, t.a);
  const b = Math.min(s.b, t.b);
  const lift = (u: Laurent) => polyMul(polyMul(u.c, polyPow([0, 1], u.a - a)), polyPow(ONE_MINUS_X, u.b - b));
  return normalise({ c: polyAdd(lift(s), lift(t)), a, b });
}

const mul = (s: Laurent, t: Laurent): Laurent => normalise({ c: polyMul(s.c, t.c), a: s.a + t.a, b: s.b + t.b });

function reciprocal(t: Laurent): Laurent {
  const n = normalise(t);
  if (n.c.length !== 1 || n.c[0] === 0) throw new NotElementary("the weight divides by a polynomial with roots other than 0 and 1");
  return { c: [1 / n.c[0]!], a: -n.a, b: -n.b };
}

function power(t: Laurent, n: number): Laurent {
  if (Math.abs(n) > MAX_DEGREE) throw new NotElementary(`the exponent ${n} is too large`);
  const base = n < 0 ? reciprocal(t) : normalise(t);
  const k = Math.abs(n);
  return normalise({ c: polyPow(base.c, k), a: base.a * k, b: base.b * k });
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
        return add(toLaurent(e.left, x), e.op === "+" ? r : { ...r, c: polyScale(r.c, -1) });
      }
      if (e.op === "*") return mul(toLaurent(e.left, x), toLaurent(e.right, x));
      if (e.op === "/") return mul(toLaurent(e.left, x), reciprocal(toLaurent(e.right, x)));
      if (e.op === "^") return powerOf(e.left, e.right, x);
      break;
    }
    case "call":
      if (e.callee === "pow" && e.args.length === 2) return powerOf(e.args[0]!, e.args[1]!, x);
      if (e.callee === "sqrt") throw new NotElementary("the weight has a square root (a fractional power)");
      throw new NotElementary(`the weight uses \`${e.callee}\`, which the generator does not integrate`);
    case "if":
      throw new NotElementary("the weight is piecewise (`if … then … else`)");
    default:
      break;
  }
  throw new NotElementary("the weight is not a polynomial or simple rational function of q");
}

function powerOf(base: Expr, exponent: Expr, x: string): Laurent {
  if (dependsOn(exponent, x)) throw new NotElementary("the exponent depends on q");
  const v = evalConstant(exponent);
  if (v === null || !Number.isFinite(v)) throw new NotElementary("an exponent is not a finite number");
  return power(toLaurent(base, x), asInteger(v, "the exponent"));
}

const binom = (n: number, k: number): number => {
  let r = 1;
  for (let i = 1; i <= k; i++) r = (r * (n - k + i)) / i;
  return r;
};

/** First `order` coefficients of p(x)/(1−x)^m as a power series in x. */
function seriesOverOneMinus(p: number[], m: number, order: number): number[] {
  const out: number[] = [];
  for (let k = 0; k < order; k++) {
    let s = 0;
    for (let j = 0; j <= k && j < p.length; j++) s += p[j]! * binom(m + k - j - 1, k - j);
    out.push(s);
  }
  return out;
}

/** Polynomial division; returns quotient and remainder. */
function polyDivide(p: number[], d: number[]): { quotient: number[]; remainder: number[] } {
  const r = p.slice();
  const dd = trim(d);
  if (r.length < dd.length) return { quotient: [0], remainder: trim(r) };
  const quotient = new Array<number>(r.length - dd.length + 1).fill(0);
  for (let i = r.length - dd.length; i >= 0; i--) {
    const coef = r[i + dd.length - 1]! / dd[dd.length - 1]!;
    quotient[i] = coef;
    for (let j = 0; j < dd.length; j++) r[i + j]! -= coef * dd[j]!;
  }
  return { quotient: trim(quotient), remainder: trim(r.slice(0, dd.length - 1)) };
}

/**
 * Partial fractions of N(x)/(x^A·(1−x)^B): a polynomial R, coefficients alpha[i] of 1/x^i and beta[j]
 * of 1/(1−x)^j (index 0 unused).
 */
function partialFractions(t: Laurent): { r: number[]; alpha: number[]; beta: number[] } {
  const A = Math.max(0, -t.a);
  const B = Math.max(0, -t.b);
  const N = polyMul(polyMul(t.c, polyPow([0, 1], Math.max(0, t.a))), polyPow(ONE_MINUS_X, Math.max(0, t.b)));
  const alpha = new Array<number>(A + 1).fill(0);
  const beta = new Array<number>(B + 1).fill(0);
  seriesOverOneMinus(N, B, A).forEach((s, k) => (alpha[A - k] = s));
  seriesOverOneMinus(polyReflect(N), A, B).forEach((s, k) => (beta[B - k] = s));
  let rest = N;
  for (let i = 1; i <= A; i++) rest = polyAdd(rest, polyScale(polyMul(polyPow([0, 1], A - i), polyPow(ONE_MINUS_X, B)), -alpha[i]!));
  for (let j = 1; j <= B; j++) rest = polyAdd(rest, polyScale(polyMul(polyPow([0, 1], A), polyPow(ONE_MINUS_X, B - j)), -beta[j]!));
  const { quotient, remainder } = polyDivide(rest, polyMul(polyPow([0, 1], A), polyPow(ONE_MINUS_X, B)));
  const scale = Math.max(1e-300, ...N.map(Math.abs));
  if (remainder.some((v) => Math.abs(v) > 1e-9 * scale)) throw new NotElementary("the partial-fraction split did not close (internal rounding)");
  return { r: quotient, alpha, beta };
}

const isNegligible = (v: number, scale: number): boolean => Math.abs(v) <= COEFF_REL_TOL * scale;

/** Σ coef·base^k as an expression, dropping negligible terms. */
function sumTerms(terms: { coef: number; factor: Expr | null }[], scale: number): Expr {
  let out: Expr | null = null;
  for (const { coef, factor } of terms) {
    if (isNegligible(coef, scale)) continue;
    const term: Expr = factor === null ? num(Math.abs(coef)) : Math.abs(coef) === 1 ? factor : bin("*", num(Math.abs(coef)), factor);
    if (out === null) out = coef < 0 ? { kind: "unary", op: "-", operand: term, span: NOSPAN } : term;
    else out = bin(coef < 0 ? "-" : "+", out, term);
  }
  return out ?? num(0);
}

const NOSPAN = { start: 0, end: 0 };
const bin = (op: "+" | "-" | "*" | "/" | "^", left: Expr, right: Expr): Expr => ({ kind: "binary", op, left, right, span: NOSPAN });
const powOf = (base: Expr, k: number): Expr => (k === 1 ? base : bin("^", base, num(k)));

/** ∫_q^1 of the integrand (the l1 form): finite at 1 only without 1/(1−c)^j terms. */
function integrateToOne(t: Laurent, q: Expr): Expr {
  const { r, alpha, beta } = partialFractions(t);
  const scale = Math.max(...r.map(Math.abs), ...alpha.map(Math.abs), ...beta.map(Math.abs), 1e-300);
  if (beta.some((v) => !isNegligible(v, scale))) throw new NotElementary("∫_q^1 (1−c)·w(c) dc diverges at c = 1 (the loss would not be regular)");
  const u: Expr = bin("-", num(1), q);
  // ∫_q^1 R(c) dc = Σ r̃_k (1−q)^(k+1)/(k+1) with R(1−u) = Σ r̃_k u^k.
  const terms: { coef: number; factor: Expr | null }[] = polyReflect(r).map((v, k) => ({ coef: v / (k + 1), factor: powOf(u, k + 1) }));
  alpha.forEach((v, i) => {
    if (i === 0) return;
    if (i === 1) terms.push({ coef: -v, factor: call("ln", q) });
    // ∫_q^1 c^(−i) dc = (q^(1−i) − 1)/(i − 1).
    else terms.push({ coef: v / (i - 1), factor: bin("^", q, num(1 - i)) }, { coef: -v / (i - 1), factor: null });
  });
  return sumTerms(terms, scale);
}

/** ∫_0^q of the integrand (the l0 form): finite at 0 only without 1/c^i terms. */
function integrateFromZero(t: Laurent, q: Expr): Expr {
  const { r, alpha, beta } = partialFractions(t);
  const scale = Math.max(...r.map(Math.abs), ...alpha.map(Math.abs), ...beta.map(Math.abs), 1e-300);
  if (alpha.some((v) => !isNegligible(v, scale))) throw new NotElementary("∫_0^q c·w(c) dc diverges at c = 0 (the loss would not be regular)");
  const terms: { coef: number; factor: Expr | null }[] = r.map((v, k) => ({ coef: v / (k + 1), factor: powOf(q, k + 1) }));
  const u: Expr = bin("-", num(1), q);
  beta.forEach((v, j) => {
    if (j === 0) return;
    if (j === 1) terms.push({ coef: -v, factor: call("ln", u) });
    // ∫_0^q (1−c)^(−j) dc = ((1−q)^(1−j) − 1)/(j − 1).
    else terms.push({ coef: v / (j - 1), factor: bin("^", u, num(1 - j)) }, { coef: -v / (j - 1), factor: null });
  });
  return sumTerms(terms, scale);
}

/**
 * Integrates a weight (parameters already substituted) in variable `x` to the partial losses, or explains
 * why it cannot.
 */
export function integrateWeight(w: Expr, x = "q"): WeightIntegral {
  try {
    const t = toLaurent(w, x);
    const q = name(x);
    const l1 = integrateToOne(mul(t, { c: [1], a: 0, b: 1 }), q);
    const l0 = integrateFromZero(mul(t, { c: [1], a: 1, b: 0 }), q);
    return { ok: true, l1, l0 };
  } catch (err) {
    if (err instanceof NotElementary) return { ok: false, reason: err.message };
    return { ok: false, reason: `internal error while integrating the weight: ${err instanceof Error ? err.message : String(err)}` };
  }
}
