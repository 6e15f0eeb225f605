/**
 * Closed-form derivations of binary losses, shared by the service (hovers, quick fixes, issue messages)
 * and code generation: the Savage partials of a Bayes risk, the weight function of partial losses, the
 * Bayes risk L(q, q), the posterior-recovery map, and the partial losses of a weight by the integral form.
 * Also the printer for derived formulas (`show`, `showBest`), which reads them in a normal form.
 *
 * Everything here is pure symbolic work on expression ASTs; nothing throws out of the exported functions
 * except where the JSDoc says so (`integrateWeight` returns a reason instead).
 */
import type { Expr } from "../syntax/ast.js";
import { CONSTANTS } from "./builtins.js";
import { compileExpr, evalConstant } from "./compile.js";
import { call, dependsOn, name, negate, num, op, printExpr, simplify, tidy } from "./symbolic.js";

// ---------------------------------------------------------------------------------------------------
// Derivations.

/**
 * The Savage partials of a Bayes risk H(q) with derivative H'(q): l1 = H + (1−q)H', l0 = H − qH'.
 * Savage 1971, "Elicitation of personal probabilities and expectations", JASA 66; Reid & Williamson 2010,
 * "Composite Binary Losses", JMLR 11, Thm 7.
 */
export function savagePartials(h: Expr, dh: Expr, q: string): { l1: Expr; l0: Expr } {
  const l1 = simplify(op("+", h, op("*", op("-", num(1), name(q)), dh)));
  const l0 = simplify(op("-", h, op("*", name(q), dh)));
  return { l1, l0 };
}

/**
 * The weight function of partial losses, by each stationarity ratio: w = −l1'/(1−q) and w = l0'/q.
 * Shuford, Albert & Massengill 1966 (Psychometrika 31); Reid & Williamson 2010, "Composite Binary Losses",
 * JMLR 11, Thm 1 (and eq. 11).
 */
export function weightFromPartials(dl1: Expr | null, dl0: Expr | null, q: string): { fromL1: Expr | null; fromL0: Expr | null } {
  return {
    fromL1: dl1 ? simplify(negate(op("/", dl1, op("-", num(1), name(q))))) : null,
    fromL0: dl0 ? simplify(op("/", dl0, name(q))) : null,
  };
}

/** The Bayes risk of a proper loss, L(q, q) = q·l1(q) + (1−q)·l0(q) (common practice: the conditional risk on the diagonal). */
export function bayesFromPartials(l1: Expr, l0: Expr, q: string): Expr {
  return simplify(op("+", op("*", name(q), l1), op("*", op("-", num(1), name(q)), l0)));
}

/**
 * The posterior-recovery map of a loss with differentiable partials: at the minimiser q of L(η, ·),
 * η·l1'(q) + (1−η)·l0'(q) = 0, so η = l0'(q) / (l0'(q) − l1'(q)).
 * Reid & Williamson 2010, "Composite Binary Losses", JMLR 11, Cor. 12 (first-order condition).
 */
export function recoveryMap(dl1: Expr, dl0: Expr): Expr {
  return simplify(op("/", dl0, op("-", dl0, dl1)));
}

// ---------------------------------------------------------------------------------------------------
// Polynomials of one variable with numeric coefficients, by degree: [a0, a1, a2, …].

type Poly = number[];

/** Coefficients below this are rounding noise from exact small-integer arithmetic (relative to 1). */
const COEF_TOL = 1e-12;

/** Drops trailing coefficients of magnitude at most `tol` (exact zeros by default). */
function trim(p: Poly, tol = 0): Poly {
  const out = [...p];
  while (out.length > 1 && Math.abs(out[out.length - 1]!) <= tol) out.pop();
  return out.length === 0 ? [0] : out;
}

function polyAdd(a: Poly, b: Poly, sign = 1): Poly {
  const out: Poly = [];
  for (let i = 0; i < Math.max(a.length, b.length); i++) out.push((a[i] ?? 0) + sign * (b[i] ?? 0));
  return trim(out);
}

function polyMul(a: Poly, b: Poly): Poly {
  const out: Poly = new Array<number>(a.length + b.length - 1).fill(0);
  a.forEach((x, i) => b.forEach((y, j) => (out[i + j]! += x * y)));
  return trim(out);
}

const polyScale = (p: Poly, s: number): Poly => trim(p.map((v) => v * s));
const polyEval = (p: Poly, x: number): number => p.reduceRight((acc, v) => acc * x + v, 0);

/** Polynomial long division p = quotient·d + remainder. */
function polyDivide(p: Poly, d: Poly): { quotient: Poly; remainder: Poly } {
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
interface SignedTerm {
  sign: number;
  term: Expr;
}

/** Joins signed terms in order, except that a positive term is moved first so the sum does not start with a minus when it need not. */
function sumExpr(terms: SignedTerm[]): Expr {
  const ordered = [...terms];
  const firstPositive = ordered.findIndex((t) => t.sign > 0);
  if (firstPositive > 0) ordered.unshift(...ordered.splice(firstPositive, 1));
  let out: Expr | null = null;
  for (const t of ordered) out = out === null ? (t.sign < 0 ? negate(t.term) : t.term) : op(t.sign < 0 ? "-" : "+", out, t.term);
  return out ?? num(0);
}

/** Σ coef·factor as signed terms, dropping coefficients at most `tol` in magnitude. */
function signedTerms(terms: { coef: number; factor: Expr | null }[], tol: number): SignedTerm[] {
  return terms.filter((t) => Math.abs(t.coef) > tol).map((t) => ({ sign: Math.sign(t.coef), term: scaled(Math.abs(t.coef), t.factor) }));
}

/** x^k as an expression (null for k = 0, the constant term). */
const powerOf = (base: Expr, k: number): Expr | null => (k === 0 ? null : k === 1 ? base : op("^", base, num(k)));

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

/** A rational function num/den of one variable. */
interface Rational {
  num: Poly;
  den: Poly;
}

/** Largest degree of the display's rational form; the partial losses people write are low-degree, and this bounds the work. */
const MAX_RATIONAL_DEGREE = 24;

const deg = (p: Poly): number => trim(p, COEF_TOL).length - 1;
const isZero = (p: Poly): boolean => p.every((c) => Math.abs(c) <= COEF_TOL);

function rMulPoly(a: Poly, b: Poly): Poly | null {
  return deg(a) + deg(b) > MAX_RATIONAL_DEGREE ? null : trim(polyMul(a, b), COEF_TOL);
}

function rAdd(a: Rational, b: Rational, sign: number): Rational | null {
  const n1 = rMulPoly(a.num, b.den);
  const n2 = rMulPoly(b.num, a.den);
  const d = rMulPoly(a.den, b.den);
  return n1 && n2 && d ? { num: trim(polyAdd(n1, n2, sign), COEF_TOL), den: d } : null;
}

function rMul(a: Rational, b: Rational): Rational | null {
  const n = rMulPoly(a.num, b.num);
  const d = rMulPoly(a.den, b.den);
  return n && d ? { num: n, den: d } : null;
}

/** Division with near-zero leading coefficients dropped first, so rounding noise does not raise a degree. */
function divideTol(a: Poly, b: Poly): { q: Poly; r: Poly } {
  const { quotient, remainder } = polyDivide(trim(a, COEF_TOL), trim(b, COEF_TOL));
  return { q: trim(quotient, COEF_TOL), r: trim(remainder, COEF_TOL) };
}

/** Scales a polynomial so its largest coefficient has magnitude 1 (keeps Euclid's remainders well-conditioned). */
function normalisePoly(p: Poly): Poly {
  const m = Math.max(...p.map((c) => Math.abs(c)));
  return m > 0 ? trim(p.map((c) => c / m), COEF_TOL) : p;
}

/** Greatest common divisor of two polynomials by Euclid's algorithm, with remainders below a relative tolerance taken as zero. */
function gcdPoly(a: Poly, b: Poly): Poly {
  let x = normalisePoly(trim(a, COEF_TOL));
  let y = normalisePoly(trim(b, COEF_TOL));
  for (let i = 0; i < 2 * MAX_RATIONAL_DEGREE + 2 && !isZero(y); i++) {
    const r = normalisePoly(trim(divideTol(x, y).r.map((c) => (Math.abs(c) < 1e-9 ? 0 : c)), COEF_TOL));
    x = y;
    y = r;
  }
  return x;
}

/** Cancels the common factor of numerator and denominator, and makes the denominator's leading coefficient positive. */
function reduce(r: Rational): Rational {
  const g = gcdPoly(r.num, r.den);
  let top = r.num;
  let bottom = r.den;
  if (deg(g) > 0) {
    const n = divideTol(r.num, g);
    const d = divideTol(r.den, g);
    const small = (p: Poly) => p.every((c) => Math.abs(c) < 1e-9);
    if (small(n.r) && small(d.r)) {
      top = n.q;
      bottom = d.q;
    }
  }
  const dd = trim(bottom, COEF_TOL);
  const lead = dd[dd.length - 1]!;
  // A monic-like denominator: divide both by its leading coefficient when that keeps the numbers short.
  const scale = Number.isInteger(1 / lead) || Number.isInteger(lead) ? lead : 1;
  const out = { num: trim(top, COEF_TOL).map((c) => c / scale), den: dd.map((c) => c / scale) };
  // A numerator with only negative coefficients reads better with the signs moved into the denominator.
  if (out.num.every((c) => c <= 0) && out.num.some((c) => c < 0)) return { num: out.num.map((c) => -c), den: out.den.map((c) => -c) };
  return out;
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
