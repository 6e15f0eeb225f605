/**
 * The printer for derived formulas (`show`, `showBest`), which reads them in a normal form: products
 * expanded over sums with like terms collected, or the canonical (reduced) rational form of a rational
 * function of the variable, whichever is shorter; a rewritten form is printed only when it agrees
 * numerically with the original.
 */
import type { Expr } from "../../syntax/ast.js";
import { CONSTANTS } from "../builtins.js";
import { compileExpr } from "../compile.js";
import { call, name, negate, num, op, printExpr, simplify, tidy } from "../symbolic.js";
import { COEF_TOL, MAX_RATIONAL_DEGREE, deg, divideTol, isZero, rAdd, reduce, rMul, trim, type Poly, type Rational } from "./polynomial.js";

// ---------------------------------------------------------------------------------------------------
// Printing derived formulas: a normal form that expands products over sums and collects like terms, so
// formulas such as the Savage partials of the entropy print as `-ln(q)` rather than as the unexpanded
// chain rule, and a canonical rational form for rational functions of the variable.

/** A coefficient as a short exact-looking fraction n/d (denominators up to 1000, common practice), or null. */
function fraction(c: number): { n: number; d: number } | null {
  for (let d = 1; d <= 1000; d++) {
    const n = Math.round(c * d);
    if (Math.abs(n / d - c) < COEF_TOL * Math.max(1, Math.abs(c))) return { n, d };
  }
  return null;
}

/** c·t for a non-negative coefficient c and a term t (null t means the constant term); other coefficients keep full precision. */
function scaled(c: number, t: Expr | null): Expr {
  const f = fraction(c);
  if (!f) return t ? op("*", num(c), t) : num(c);
  const top: Expr = t === null ? num(f.n) : f.n === 1 ? t : op("*", num(f.n), t);
  return f.d === 1 ? top : op("/", top, num(f.d));
}

/** A signed term of a sum. */
export interface SignedTerm {
  sign: number;
  term: Expr;
}

/** Joins signed terms in order, except that a positive term is moved first so the sum does not start with a minus when it need not. */
export function sumExpr(terms: SignedTerm[]): Expr {
  const ordered = [...terms];
  const firstPositive = ordered.findIndex((t) => t.sign > 0);
  if (firstPositive > 0) ordered.unshift(...ordered.splice(firstPositive, 1));
  let out: Expr | null = null;
  for (const t of ordered) out = out === null ? (t.sign < 0 ? negate(t.term) : t.term) : op(t.sign < 0 ? "-" : "+", out, t.term);
  return out ?? num(0);
}

/** Σ coef·factor as signed terms, dropping coefficients at most `tol` in magnitude. */
export function signedTerms(terms: { coef: number; factor: Expr | null }[], tol: number): SignedTerm[] {
  return terms.filter((t) => Math.abs(t.coef) > tol).map((t) => ({ sign: Math.sign(t.coef), term: scaled(Math.abs(t.coef), t.factor) }));
}

/** x^k as an expression (null for k = 0, the constant term). */
export const powerOf = (base: Expr, k: number): Expr | null => (k === 0 ? null : k === 1 ? base : op("^", base, num(k)));

/** A polynomial in ascending powers, which read naturally for the partial losses of the notation, e.g. 1 - 2 * q + q^2. */
function polyExpr(p: Poly, x: string): Expr {
  return sumExpr(signedTerms(p.map((coef, k) => ({ coef, factor: powerOf(name(x), k) })), COEF_TOL));
}

/** One term: a coefficient times atoms (names, calls, non-integer powers, non-monomial denominators) to integer powers. */
interface Mono {
  coef: number;
  factors: Map<string, { atom: Expr; pow: number }>;
}

/** Terms beyond this are not expanded (the display falls back to the simplified tree). */
const MAX_TERMS = 48;
/** Integer powers of sums expanded up to this exponent. */
const MAX_EXPAND_POWER = 4;

function monoKey(m: Mono): string {
  return [...m.factors.entries()].filter(([, f]) => f.pow !== 0).sort(([a], [b]) => (a < b ? -1 : a > b ? 1 : 0)).map(([k, f]) => `${k}^${f.pow}`).join("*");
}

function collect(terms: Mono[]): Mono[] | null {
  const byKey = new Map<string, Mono>();
  for (const t of terms) {
    const k = monoKey(t);
    const prev = byKey.get(k);
    if (prev) prev.coef += t.coef;
    else byKey.set(k, { coef: t.coef, factors: new Map([...t.factors].filter(([, f]) => f.pow !== 0)) });
  }
  const out = [...byKey.values()].filter((m) => Math.abs(m.coef) > COEF_TOL);
  return out.length > MAX_TERMS ? null : out;
}

function mulMono(a: Mono, b: Mono): Mono {
  const factors = new Map([...a.factors].map(([k, f]) => [k, { ...f }]));
  for (const [k, f] of b.factors) {
    const prev = factors.get(k);
    if (prev) prev.pow += f.pow;
    else factors.set(k, { ...f });
  }
  return { coef: a.coef * b.coef, factors };
}

function mulSum(a: Mono[], b: Mono[]): Mono[] | null {
  if (a.length * b.length > MAX_TERMS * 4) return null;
  const out: Mono[] = [];
  for (const x of a) for (const y of b) out.push(mulMono(x, y));
  return collect(out);
}

function atomSum(atom: Expr, pow = 1): Mono[] {
  return [{ coef: 1, factors: new Map([[printExpr(atom), { atom, pow }]]) }];
}

function normalise(e: Expr): Mono[] | null {
  switch (e.kind) {
    case "number": return [{ coef: e.value, factors: new Map() }];
    case "name": return CONSTANTS.has(e.name) ? [{ coef: CONSTANTS.get(e.name)!.value, factors: new Map() }] : atomSum(e);
    case "paren": return normalise(e.inner);
    case "unary": {
      if (e.op === "not") return null;
      const a = normalise(e.operand);
      return a && e.op === "-" ? a.map((m) => ({ ...m, coef: -m.coef })) : a;
    }
    case "call": {
      const args: Expr[] = [];
      for (const x of e.args) {
        const n = normalise(x);
        args.push(n ? fromMonos(n) : x);
      }
      return atomSum(call(e.callee, ...args));
    }
    case "binary": {
      const a = normalise(e.left);
      if (!a) return null;
      if (e.op === "^") {
        const p = simplify(e.right);
        if (p.kind === "number" && Number.isInteger(p.value)) {
          if (a.length === 1) {
            const m = a[0]!;
            return [{ coef: m.coef ** p.value, factors: new Map([...m.factors].map(([k, f]) => [k, { atom: f.atom, pow: f.pow * p.value }])) }];
          }
          if (p.value >= 0 && p.value <= MAX_EXPAND_POWER) {
            let out: Mono[] | null = [{ coef: 1, factors: new Map() }];
            for (let i = 0; i < p.value && out; i++) out = mulSum(out, a);
            return out;
          }
          return atomSum(fromMonos(a), p.value);
        }
        const exponent = normalise(e.right);
        return atomSum(op("^", fromMonos(a), exponent ? fromMonos(exponent) : e.right));
      }
      const b = normalise(e.right);
      if (!b) return null;
      switch (e.op) {
        case "+": return collect([...a, ...b]);
        case "-": return collect([...a, ...b.map((m) => ({ ...m, coef: -m.coef }))]);
        case "*": return mulSum(a, b);
        case "/": {
          if (b.length === 1 && Math.abs(b[0]!.coef) > COEF_TOL) {
            const m = b[0]!;
            const inv: Mono = { coef: 1 / m.coef, factors: new Map([...m.factors].map(([k, f]) => [k, { atom: f.atom, pow: -f.pow }])) };
            return collect(a.map((x) => mulMono(x, inv)));
          }
          if (b.length === 0) return null;
          const ratio = proportion(a, b);
          if (ratio !== null) return ratio === 0 ? [] : [{ coef: ratio, factors: new Map() }];
          return mulSum(a, atomSum(fromMonos(b), -1));
        }
        default: return null;
      }
    }
    default: return null;
  }
}

/** k when a = k·b term by term (same monomials, proportional coefficients), else null. */
function proportion(a: Mono[], b: Mono[]): number | null {
  if (a.length === 0) return 0;
  if (a.length !== b.length) return null;
  const byKey = new Map(b.map((m) => [monoKey(m), m.coef]));
  let k: number | null = null;
  for (const m of a) {
    const c = byKey.get(monoKey(m));
    if (c === undefined) return null;
    const r = m.coef / c;
    if (k === null) k = r;
    else if (Math.abs(r - k) > COEF_TOL * Math.max(1, Math.abs(k))) return null;
  }
  return k;
}

function fromMonos(terms: Mono[]): Expr {
  // Terms in q's power order first (ascending), then by their printed factors, for a stable reading order.
  const order = (m: Mono) => {
    let qPow = 0;
    for (const [k, f] of m.factors) if (k === "q" || k === "v") qPow = f.pow;
    return qPow;
  };
  const sorted = [...terms].sort((a, b) => order(a) - order(b) || (monoKey(a) < monoKey(b) ? -1 : monoKey(a) > monoKey(b) ? 1 : 0));
  return sumExpr(sorted.map((m) => {
    const ups: Expr[] = [];
    const downs: Expr[] = [];
    for (const f of m.factors.values()) {
      if (f.pow === 0) continue;
      const mag = Math.abs(f.pow);
      (f.pow > 0 ? ups : downs).push(mag === 1 ? f.atom : op("^", f.atom, num(mag)));
    }
    const product = (xs: Expr[]): Expr | null => xs.reduce<Expr | null>((acc, x) => (acc ? op("*", acc, x) : x), null);
    const top = product(ups);
    const bottom = product(downs);
    let term = scaled(Math.abs(m.coef), top);
    if (bottom) term = op("/", top === null && Math.abs(m.coef) === 1 ? num(1) : term, bottom);
    return { sign: Math.sign(m.coef), term };
  }));
}

/** Points where a rewritten formula must agree with the original (inside (0,1) for q; any for the rest). */
const CHECK_POINTS = [0.137, 0.371, 0.713];
/** Agreement required of a rewritten formula (relative), far above the rounding of a few dozen operations. */
const REWRITE_TOL = 1e-9;

function freeNames(e: Expr): Set<string> {
  const out = new Set<string>();
  const walk = (x: Expr): void => {
    if (x.kind === "name" && !CONSTANTS.has(x.name)) out.add(x.name);
    if (x.kind === "call") x.args.forEach(walk);
    if (x.kind === "unary") walk(x.operand);
    if (x.kind === "binary") { walk(x.left); walk(x.right); }
    if (x.kind === "paren") walk(x.inner);
    if (x.kind === "if") { walk(x.cond); walk(x.then); walk(x.else); }
  };
  walk(e);
  return out;
}

/** The value of an expression with every free name bound (NaN when it does not compile or evaluate). */
function evaluateAt(e: Expr, slots: ReadonlyMap<string, number>, values: Float64Array): number {
  try {
    return compileExpr(e, { variable: null, paramSlots: slots, defs: new Map() })(NaN, values);
  } catch {
    return NaN;
  }
}

/** True when two formulas agree at the check points (both undefined counts as agreement). */
function sameFunction(a: Expr, b: Expr): boolean {
  const vars = [...new Set([...freeNames(a), ...freeNames(b)])].sort();
  const slots = new Map(vars.map((n, i) => [n, i]));
  let compared = 0;
  for (const x of CHECK_POINTS) {
    // The clause variables take the check point; any other name a fixed value away from 0 and 1.
    const values = Float64Array.from(vars, (n, i) => (n === "q" || n === "v" ? x : 1.3 + 0.17 * i));
    const va = evaluateAt(a, slots, values);
    const vb = evaluateAt(b, slots, values);
    if (Number.isNaN(va) && Number.isNaN(vb)) continue;
    if (!Number.isFinite(va) || !Number.isFinite(vb)) {
      if (va !== vb) return false;
      continue;
    }
    if (Math.abs(va - vb) > REWRITE_TOL * Math.max(1, Math.abs(va), Math.abs(vb))) return false;
    compared++;
  }
  return compared > 0;
}

/** The expanded, collected form of an expression when it is valid and agrees numerically with it; null otherwise. */
function expanded(e: Expr): Expr | null {
  const monos = normalise(e);
  if (!monos) return null;
  const out = simplify(tidy(fromMonos(monos)));
  return sameFunction(e, out) ? out : null;
}

/** Prints a derived expression after simplification: the tidied tree, or its expanded form when that is shorter. */
export function show(e: Expr): string {
  let cur = simplify(e);
  // Tidying can expose further constant folds, and folds can expose further tidying; two rounds settle it.
  for (let i = 0; i < 2; i++) cur = simplify(tidy(cur));
  const plain = printExpr(cur);
  const alt = expanded(cur);
  const other = alt ? printExpr(alt) : null;
  return other !== null && other.length < plain.length ? other : plain;
}

/** Converts an expression to a rational function of `x`, or null when it is not one (other names, calls, conditions). */
function toRational(e: Expr, x: string): Rational | null {
  switch (e.kind) {
    case "number": return { num: [e.value], den: [1] };
    case "name":
      if (e.name === x) return { num: [0, 1], den: [1] };
      return CONSTANTS.has(e.name) ? { num: [CONSTANTS.get(e.name)!.value], den: [1] } : null;
    case "paren": return toRational(e.inner, x);
    case "unary": {
      if (e.op === "not") return null;
      const a = toRational(e.operand, x);
      return a && e.op === "-" ? { num: a.num.map((c) => -c), den: a.den } : a;
    }
    case "binary": {
      const a = toRational(e.left, x);
      if (!a) return null;
      if (e.op === "^") {
        const p = simplify(e.right);
        if (p.kind !== "number" || !Number.isInteger(p.value) || Math.abs(p.value) > MAX_RATIONAL_DEGREE) return null;
        let out: Rational | null = { num: [1], den: [1] };
        for (let i = 0; i < Math.abs(p.value) && out; i++) out = rMul(out, a);
        return out && p.value < 0 ? { num: out.den, den: out.num } : out;
      }
      const b = toRational(e.right, x);
      if (!b) return null;
      switch (e.op) {
        case "+": return rAdd(a, b, 1);
        case "-": return rAdd(a, b, -1);
        case "*": return rMul(a, b);
        case "/": return isZero(b.num) ? null : rMul(a, { num: b.den, den: b.num });
        default: return null;
      }
    }
    default: return null;
  }
}

/**
 * Prints a derived expression: `show`'s form, or the canonical rational form when the expression is a
 * rational function of `x` with numeric coefficients and that form is no longer.
 */
export function showBest(e: Expr, x: string): string {
  const plain = show(e);
  const raw = toRational(simplify(e), x);
  if (!raw) return plain;
  const r = reduce(raw);
  const d = trim(r.den, COEF_TOL);
  let text: string;
  if (deg(d) === 0) {
    text = printExpr(simplify(polyExpr(trim(r.num, COEF_TOL).map((c) => c / d[0]!), x)));
  } else {
    const { q, r: rem } = divideTol(r.num, d);
    text = isZero(rem) ? printExpr(simplify(polyExpr(q, x))) : printExpr(op("/", polyExpr(trim(r.num, COEF_TOL), x), polyExpr(d, x)));
  }
  return text.length <= plain.length ? text : plain;
}
