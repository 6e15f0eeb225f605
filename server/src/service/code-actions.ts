/**
 * Code actions: quick fixes dispatched on issue codes, and loss-level refactors. Also the closed-form
 * derivations they insert (and hovers show), built symbolically from the clauses as written with helpers
 * inlined: the Savage partials of a Bayes risk, the weight function of partial losses, the Bayes risk
 * L(q, q), the posterior-recovery map, and one partial loss from the other by the integral form when the
 * integrand is a simple rational function.
 */
import type { BinaryOp, Expr } from "../syntax/ast.js";
import type { Issue, Span } from "../issue.js";
import { BUILTINS, CONSTANTS } from "../semantics/builtins.js";
import { helperBodies } from "../semantics/family.js";
import type { ClauseName, LossInfo, SemanticModel } from "../semantics/model.js";
import { suggest } from "../semantics/suggest.js";
import type { DocumentAnalysis } from "./document.js";
import { findLossAt, type TextEdit } from "./navigation.js";
import { call, dependsOn, differentiate, inlineDefs, name, num, printExpr, simplify } from "../semantics/symbolic.js";

const NOSPAN: Span = { start: 0, end: 0 };

/** A binary node (the symbolic module keeps its own builder private). */
export function op(o: BinaryOp, left: Expr, right: Expr): Expr {
  return { kind: "binary", op: o, left, right, span: NOSPAN };
}

/** Unary minus. */
export function negate(e: Expr): Expr {
  return { kind: "unary", op: "-", operand: e, span: NOSPAN };
}

/** A clause's expression with helpers inlined, its variable, and its first derivative (null when no rule applies). */
export interface ClauseExpr {
  variable: string;
  expr: Expr;
  d1: Expr | null;
}

/** The expanded expression of one clause of a loss, or null when the clause is absent, canonical or broken. */
export function clauseExpr(model: SemanticModel, loss: LossInfo, clause: ClauseName): ClauseExpr | null {
  const c = loss.clauses.get(clause);
  if (!c || c.canonical || !c.value || !c.variable) return null;
  let expr: Expr;
  try {
    expr = inlineDefs(c.value, helperBodies(model));
  } catch {
    return null;
  }
  const variable = c.variable.name;
  return { variable, expr, d1: derivative(expr, variable) };
}

/** d/dx, or null when some call has no derivative rule or the expression has a hole. */
export function derivative(e: Expr, x: string): Expr | null {
  try {
    return differentiate(e, x);
  } catch {
    // Usually NotDifferentiable (a call without a rule). Anything else is treated the same: a derived
    // formula is an extra for hovers and fixes, never required.
    return null;
  }
}

/**
 * Sign and reciprocal rewrites the symbolic simplifier leaves out, so derived formulas read as people
 * write them: (−1)/y → −(1/y), a·(1/b) → a/b, a·(−b) → −(a·b), a − (−b) → a + b, a + (−b) → a − b.
 */
function tidy(e: Expr): Expr {
  switch (e.kind) {
    case "paren":
      return tidy(e.inner);
    case "unary": {
      const a = tidy(e.operand);
      if (e.op === "-" && a.kind === "unary" && a.op === "-") return a.operand;
      return { ...e, operand: a };
    }
    case "call":
      return { ...e, args: e.args.map(tidy) };
    case "if":
      return { ...e, cond: tidy(e.cond), then: tidy(e.then), else: tidy(e.else) };
    case "binary": {
      const l = tidy(e.left);
      const r = tidy(e.right);
      const isNeg = (x: Expr): x is Extract<Expr, { kind: "unary" }> => x.kind === "unary" && x.op === "-";
      const isRecip = (x: Expr): x is Extract<Expr, { kind: "binary" }> => x.kind === "binary" && x.op === "/" && x.left.kind === "number" && x.left.value === 1;
      switch (e.op) {
        case "/":
          if (l.kind === "number" && l.value < 0) return negate(op("/", num(-l.value), r));
          if (isNeg(l)) return negate(op("/", l.operand, r));
          break;
        case "*":
          if (isRecip(r)) return tidy(op("/", l, r.right));
          if (isRecip(l)) return tidy(op("/", r, l.right));
          if (isNeg(r)) return negate(tidy(op("*", l, r.operand)));
          if (isNeg(l)) return negate(tidy(op("*", l.operand, r)));
          break;
        case "-":
          if (isNeg(r)) return op("+", l, r.operand);
          break;
        case "+":
          if (isNeg(r)) return op("-", l, r.operand);
          if (isNeg(l)) return op("-", r, l.operand);
          break;
        default:
          break;
      }
      return { ...e, left: l, right: r };
    }
    default:
      return e;
  }
}

// ---------------------------------------------------------------------------------------------------
// A normal form for display: expand products over sums and collect like terms, so derived formulas such
// as the Savage partials of the entropy print as `-ln(q)` rather than as the unexpanded chain rule.

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
      const base = f.atom;
      const mag = Math.abs(f.pow);
      const t = mag === 1 ? base : op("^", base, num(mag));
      (f.pow > 0 ? ups : downs).push(t);
    }
    const product = (xs: Expr[]): Expr | null => xs.reduce<Expr | null>((acc, x) => (acc ? op("*", acc, x) : x), null);
    const top = product(ups);
    const bottom = product(downs);
    let term = scaled(Math.abs(m.coef), top);
    if (bottom) term = op("/", top === null && Math.abs(m.coef) === 1 ? num(1) : term, bottom);
    return { sign: Math.sign(m.coef), term };
  }));
}

/** A tiny evaluator for the display check (names not given in `env` are undefined: NaN). */
function evaluate(e: Expr, env: ReadonlyMap<string, number>): number {
  switch (e.kind) {
    case "number": return e.value;
    case "name": return env.get(e.name) ?? CONSTANTS.get(e.name)?.value ?? NaN;
    case "paren": return evaluate(e.inner, env);
    case "unary": return e.op === "-" ? -evaluate(e.operand, env) : e.op === "+" ? evaluate(e.operand, env) : NaN;
    case "call": {
      const b = BUILTINS.get(e.callee);
      return b ? b.fn(...e.args.map((a) => evaluate(a, env))) : NaN;
    }
    case "binary": {
      const l = evaluate(e.left, env);
      const r = evaluate(e.right, env);
      switch (e.op) {
        case "+": return l + r;
        case "-": return l - r;
        case "*": return l * r;
        case "/": return l / r;
        case "^": return Math.pow(l, r);
        default: return NaN;
      }
    }
    default: return NaN;
  }
}

/** Points where a rewritten formula must agree with the original (inside (0,1) for q; any for the rest). */
const CHECK_POINTS = [0.137, 0.371, 0.713];
/** Agreement required of a rewritten formula (relative), far above the rounding of a few dozen operations. */
const REWRITE_TOL = 1e-9;

function names(e: Expr): Set<string> {
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

/** True when two formulas agree at the check points (both undefined counts as agreement). */
function sameFunction(a: Expr, b: Expr): boolean {
  const vars = [...new Set([...names(a), ...names(b)])].sort();
  let compared = 0;
  for (const x of CHECK_POINTS) {
    const env = new Map(vars.map((n, i) => [n, n === "q" || n === "v" ? x : 1.3 + 0.17 * i]));
    const va = evaluate(a, env);
    const vb = evaluate(b, env);
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

/** Prints a derived expression after simplification. */
export function show(e: Expr): string {
  let cur = simplify(e);
  // Tidying can expose further constant folds, and folds can expose further tidying; two rounds settle it.
  for (let i = 0; i < 2; i++) cur = simplify(tidy(cur));
  const plain = printExpr(cur);
  const alt = expanded(cur);
  const other = alt ? printExpr(alt) : null;
  return other !== null && other.length < plain.length ? other : plain;
}

/**
 * The Savage partials of a Bayes risk H(q): l1 = H + (1−q)H', l0 = H − qH'.
 * Savage 1971, "Elicitation of personal probabilities and expectations", JASA 66; Reid & Williamson 2010, "Composite Binary Losses", JMLR 11, Thm 7.
 */
export function savagePartials(h: Expr, dh: Expr, q: string): { l1: Expr; l0: Expr } {
  const l1 = simplify(op("+", h, op("*", op("-", num(1), name(q)), dh)));
  const l0 = simplify(op("-", h, op("*", name(q), dh)));
  return { l1, l0 };
}

/**
 * The weight function of partial losses, by each stationarity ratio: w = −l1'/(1−q) and w = l0'/q.
 * Reid & Williamson 2010, "Composite Binary Losses", JMLR 11, Thm 1 (and eq. 11).
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
 * η·l1'(q) + (1−η)·l0'(q) = 0, so η = l0'(q) / (l0'(q) − l1'(q)) (first-order condition, common practice).
 */
export function recoveryMap(dl1: Expr, dl0: Expr): Expr {
  return simplify(op("/", dl0, op("-", dl0, dl1)));
}

// ---------------------------------------------------------------------------------------------------
// Rational functions of one variable with numeric coefficients, for the integral form of a partial.

/** Coefficients by degree: [a0, a1, a2, …]. */
type Poly = number[];

interface Rational {
  num: Poly;
  den: Poly;
}

/** Largest degree handled; the partial losses people write are low-degree, and this bounds the work. */
const MAX_DEGREE = 24;
/** Coefficients below this are rounding noise from exact small-integer arithmetic (relative to 1). */
const COEF_TOL = 1e-12;

function trim(p: Poly): Poly {
  const out = [...p];
  while (out.length > 1 && Math.abs(out[out.length - 1]!) < COEF_TOL) out.pop();
  return out.length === 0 ? [0] : out;
}

function deg(p: Poly): number {
  return trim(p).length - 1;
}

function isZero(p: Poly): boolean {
  return trim(p).every((c) => Math.abs(c) < COEF_TOL);
}

function add(a: Poly, b: Poly, sign = 1): Poly {
  const n = Math.max(a.length, b.length);
  const out: Poly = [];
  for (let i = 0; i < n; i++) out.push((a[i] ?? 0) + sign * (b[i] ?? 0));
  return trim(out);
}

function mul(a: Poly, b: Poly): Poly | null {
  if (deg(a) + deg(b) > MAX_DEGREE) return null;
  const out: Poly = new Array(a.length + b.length - 1).fill(0);
  a.forEach((x, i) => b.forEach((y, j) => (out[i + j] += x * y)));
  return trim(out);
}

function evalPoly(p: Poly, x: number): number {
  let s = 0;
  for (let i = p.length - 1; i >= 0; i--) s = s * x + p[i]!;
  return s;
}

/** Polynomial long division a = q·b + r. */
function divide(a: Poly, b: Poly): { q: Poly; r: Poly } {
  const bb = trim(b);
  let r = trim(a);
  const db = bb.length - 1;
  const q: Poly = new Array(Math.max(1, r.length - db)).fill(0);
  const lead = bb[db]!;
  while (!isZero(r) && r.length - 1 >= db) {
    const k = r.length - 1 - db;
    const c = r[r.length - 1]! / lead;
    q[k] = c;
    const sub: Poly = new Array(k).fill(0).concat(bb.map((x) => x * c));
    r = add(r, sub, -1);
    if (r.length - 1 >= k + db) r = trim(r.slice(0, k + db));
  }
  return { q: trim(q), r };
}

function rAdd(a: Rational, b: Rational, sign: number): Rational | null {
  const n1 = mul(a.num, b.den);
  const n2 = mul(b.num, a.den);
  const d = mul(a.den, b.den);
  return n1 && n2 && d ? { num: add(n1, n2, sign), den: d } : null;
}

function rMul(a: Rational, b: Rational): Rational | null {
  const n = mul(a.num, b.num);
  const d = mul(a.den, b.den);
  return n && d ? { num: n, den: d } : null;
}

/** Scales a polynomial so its largest coefficient has magnitude 1 (keeps Euclid's remainders well-conditioned). */
function normalisePoly(p: Poly): Poly {
  const m = Math.max(...p.map((c) => Math.abs(c)));
  return m > 0 ? trim(p.map((c) => c / m)) : p;
}

/** Greatest common divisor of two polynomials by Euclid's algorithm, with remainders below a relative tolerance taken as zero. */
function gcdPoly(a: Poly, b: Poly): Poly {
  let x = normalisePoly(trim(a));
  let y = normalisePoly(trim(b));
  for (let i = 0; i < 2 * MAX_DEGREE + 2 && !isZero(y); i++) {
    const r = normalisePoly(divide(x, y).r.map((c) => (Math.abs(c) < 1e-9 ? 0 : c)));
    x = y;
    y = trim(r);
  }
  return x;
}

/** Cancels the common factor of numerator and denominator, and makes the denominator's leading coefficient positive. */
function reduce(r: Rational): Rational {
  const g = gcdPoly(r.num, r.den);
  let num = r.num;
  let den = r.den;
  if (deg(g) > 0) {
    const n = divide(r.num, g);
    const d = divide(r.den, g);
    const small = (p: Poly) => p.every((c) => Math.abs(c) < 1e-9);
    if (small(n.r) && small(d.r)) {
      num = n.q;
      den = d.q;
    }
  }
  const dd = trim(den);
  const lead = dd[dd.length - 1]!;
  // A monic-like denominator: divide both by its leading coefficient when that keeps the numbers short.
  const scale = Number.isInteger(1 / lead) || Number.isInteger(lead) ? lead : 1;
  const out = { num: trim(num).map((c) => c / scale), den: dd.map((c) => c / scale) };
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
        if (p.kind !== "number" || !Number.isInteger(p.value) || Math.abs(p.value) > MAX_DEGREE) return null;
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

/** An antiderivative: polynomial part plus Σ A·ln|x − r| over simple roots r ∈ {0, 1} of the denominator. */
interface Antiderivative {
  poly: Poly;
  logs: { root: 0 | 1; coef: number }[];
}

/** Integrates a rational function whose denominator, after cancelling common factors, is k·x^a·(1−x)^b with a, b ≤ 1. */
function antiderivative(r: Rational): Antiderivative | null {
  const { q, r: rem } = divide(r.num, r.den);
  const poly: Poly = [0, ...q.map((c, i) => c / (i + 1))];
  if (isZero(rem)) return { poly: trim(poly), logs: [] };
  const d = trim(r.den);
  const roots: (0 | 1)[] = [];
  let rest = d;
  for (const root of [0, 1] as const) {
    if (Math.abs(evalPoly(rest, root)) < COEF_TOL) {
      const { q: qq, r: rr } = divide(rest, [-root, 1]);
      if (!isZero(rr)) return null;
      roots.push(root);
      rest = qq;
    }
  }
  // Only a constant may remain: repeated roots or other roots are beyond this small integrator.
  if (deg(rest) !== 0 || roots.length === 0) return null;
  if (roots.some((root) => Math.abs(evalPoly(rest, root)) < COEF_TOL)) return null;
  const dd = derivPoly(d);
  const logs = roots.map((root) => ({ root, coef: evalPoly(rem, root) / evalPoly(dd, root) }));
  return { poly: trim(poly), logs };
}

function derivPoly(p: Poly): Poly {
  return trim(p.slice(1).map((c, i) => c * (i + 1)));
}

/** A coefficient as a short exact-looking fraction n/d (denominators up to 1000, common practice), or null. */
function fraction(c: number): { n: number; d: number } | null {
  for (let d = 1; d <= 1000; d++) {
    const n = Math.round(c * d);
    if (Math.abs(n / d - c) < 1e-12 * Math.max(1, Math.abs(c))) return { n, d };
  }
  return null;
}

/** c·t for a non-negative coefficient c and a term t (null t means the constant term). */
function scaled(c: number, t: Expr | null): Expr {
  const f = fraction(c);
  if (!f) return t ? op("*", num(Number(c.toPrecision(12))), t) : num(Number(c.toPrecision(12)));
  const top: Expr = t === null ? num(f.n) : f.n === 1 ? t : op("*", num(f.n), t);
  return f.d === 1 ? top : op("/", top, num(f.d));
}

/** Joins signed terms in order, except that a positive term is moved first so the sum does not start with a minus when it need not. */
function sumExpr(terms: { sign: number; term: Expr }[]): Expr {
  const ordered = [...terms];
  const firstPositive = ordered.findIndex((t) => t.sign > 0);
  if (firstPositive > 0) ordered.unshift(...ordered.splice(firstPositive, 1));
  let out: Expr | null = null;
  for (const t of ordered) out = out === null ? (t.sign < 0 ? negate(t.term) : t.term) : op(t.sign < 0 ? "-" : "+", out, t.term);
  return out ?? num(0);
}

function polyTerms(p: Poly, x: string): { sign: number; term: Expr }[] {
  const out: { sign: number; term: Expr }[] = [];
  // Ascending powers read naturally for the partial losses of the notation, e.g. 1 - 2 * q + q^2.
  for (let k = 0; k < p.length; k++) {
    const c = p[k]!;
    if (Math.abs(c) < COEF_TOL) continue;
    const power = k === 0 ? null : k === 1 ? name(x) : op("^", name(x), num(k));
    out.push({ sign: Math.sign(c), term: scaled(Math.abs(c), power) });
  }
  return out;
}

function polyExpr(p: Poly, x: string): Expr {
  return sumExpr(polyTerms(p, x));
}

/**
 * Prints a derived expression: the simplified tree, or its canonical rational form when the expression
 * is a rational function of `x` with numeric coefficients and that form is shorter.
 */
export function showBest(e: Expr, x: string): string {
  const plain = show(e);
  const raw = toRational(simplify(e), x);
  if (!raw) return plain;
  const r = reduce(raw);
  const d = trim(r.den);
  let text: string;
  if (deg(d) === 0) {
    text = printExpr(simplify(polyExpr(trim(r.num).map((c) => c / d[0]!), x)));
  } else {
    const { q, r: rem } = divide(r.num, d);
    if (!isZero(rem)) {
      // Normalise the denominator's leading coefficient so `(2 - 2q)` style factors do not multiply.
      text = printExpr(op("/", polyExpr(trim(r.num), x), polyExpr(d, x)));
    } else {
      text = printExpr(simplify(polyExpr(q, x)));
    }
  }
  return text.length <= plain.length ? text : plain;
}

/** Sample points for the sign check of a weight function: an even grid inside (0, 1) (common practice). */
const SIGN_GRID = Array.from({ length: 99 }, (_, i) => (i + 1) / 100);
/** A weight this far below zero at a grid point counts as negative (rounding in exact small arithmetic is far smaller). */
const WEIGHT_TOL = 1e-9;

/**
 * The missing partial loss from the given one, when the loss completed this way is proper (w ≥ 0) and the
 * integral has a closed form this integrator can build:
 *   l0(q) = ∫_0^q c·w(c) dc with w(c) = −l1'(c)/(1−c), or l1(q) = ∫_q^1 (1−c)·w(c) dc with w(c) = l0'(c)/c.
 * Shuford, Albert & Massengill 1966 (Psychometrika 31); Reid & Williamson 2010, "Composite Binary Losses", JMLR 11, Thm 6 (integral representation).
 * Returns the printed expression in the variable `q`, or null.
 */
export function completePartial(given: "l1" | "l0", dGiven: Expr, q: string): string | null {
  const d = toRational(dGiven, q);
  if (!d) return null;
  // w as a rational function: −l1'/(1−q) or l0'/q.
  const w = given === "l1"
    ? rMul({ num: d.num.map((c) => -c), den: d.den }, { num: [1], den: [1, -1] })
    : rMul(d, { num: [1], den: [0, 1] });
  return w ? partialFromWeight(w, given === "l1" ? "l0" : "l1", q) : null;
}

/**
 * Both partial losses of a weight function in closed form where the small integrator can build them:
 * l1(q) = ∫_q^1 (1−c)w(c)dc, l0(q) = ∫_0^q c·w(c)dc (Reid & Williamson 2010, "Composite Binary Losses", JMLR 11, Thm 6).
 */
export function partialsFromWeight(weight: Expr, q: string): { l1: string | null; l0: string | null } {
  const w = toRational(simplify(weight), q);
  if (!w) return { l1: null, l0: null };
  return { l1: partialFromWeight(w, "l1", q), l0: partialFromWeight(w, "l0", q) };
}

function partialFromWeight(w: Rational, target: "l1" | "l0", q: string): string | null {
  for (const x of SIGN_GRID) {
    const value = evalPoly(w.num, x) / evalPoly(w.den, x);
    if (!Number.isFinite(value) || value < -WEIGHT_TOL) return null;
  }
  const integrand = target === "l0" ? rMul(w, { num: [0, 1], den: [1] }) : rMul(w, { num: [1, -1], den: [1] });
  if (!integrand) return null;
  const F = antiderivative(integrand);
  if (!F) return null;
  // Definite integral: l0 = F(q) − F(0) needs F finite at 0; l1 = F(1) − F(q) needs F finite at 1.
  const bad: 0 | 1 = target === "l0" ? 0 : 1;
  if (F.logs.some((l) => l.root === bad && Math.abs(l.coef) > COEF_TOL)) return null;
  const at = target === "l0" ? 0 : 1;
  const sign = target === "l0" ? 1 : -1;
  const poly = add(F.poly, [evalPoly(F.poly, at)], -1).map((c) => sign * c);
  const terms = polyTerms(trim(poly), q);
  for (const l of F.logs) {
    if (Math.abs(l.coef) < COEF_TOL) continue;
    const arg = l.root === 0 ? name(q) : op("-", num(1), name(q));
    const c = sign * l.coef;
    terms.push({ sign: Math.sign(c), term: scaled(Math.abs(c), call("ln", arg)) });
  }
  return printExpr(simplify(sumExpr(terms)));
}

// ---------------------------------------------------------------------------------------------------
// Code actions, dispatched on issue codes (and a few loss-level refactors).

/** One code action: a titled set of edits on the document. */
export interface CodeAction {
  title: string;
  /** "quickfix" fixes an issue; "refactor" rewrites a correct loss. */
  kind: "quickfix" | "refactor";
  edits: TextEdit[];
  /** The issue the action fixes (quick fixes only). */
  issue?: Issue;
  isPreferred?: boolean;
}

const EXPECT_CLAIMS = ["proper", "strictly proper", "improper", "convex"];

function overlaps(a: Span, b: Span): boolean {
  return a.start <= b.end && b.start <= a.end;
}

/** The whitespace that starts the line holding `offset`. */
function indentAt(text: string, offset: number): string {
  let s = offset;
  while (s > 0 && text[s - 1] !== "\n" && text[s - 1] !== "\r") s--;
  const m = /^[ \t]*/.exec(text.slice(s, offset));
  return m ? m[0] : "";
}

/** The document's line ending (CRLF when it already uses one). */
function eolOf(text: string): string {
  return text.includes("\r\n") ? "\r\n" : "\n";
}

function lossOf(doc: DocumentAnalysis, issue: { span: Span; data?: Record<string, unknown> }): LossInfo | null {
  const named = typeof issue.data?.["loss"] === "string" ? doc.model.losses.find((l) => l.name === issue.data!["loss"]) : undefined;
  return named ?? findLossAt(doc.model, issue.span.start);
}

/** Replace a misspelt name, clause or claim by the suggestion the checker made. */
function fixSuggestion(doc: DocumentAnalysis, issue: Issue): CodeAction[] {
  const s = issue.data?.["suggestion"];
  if (issue.code === "invalid-expect") {
    const loss = lossOf(doc, issue);
    const ex = loss?.expects.find((e) => overlaps(e.clause.span, issue.span));
    if (!ex) return [];
    const words = ex.clause.words.map((w) => w.name).join(" ");
    const pick = typeof s === "string" ? s : suggest(words, EXPECT_CLAIMS);
    if (!pick || pick.includes("…")) return [];
    return [{ title: `Change to \`expect ${pick}\``, kind: "quickfix", issue, isPreferred: true, edits: [{ span: ex.clause.span, newText: `expect ${pick}` }] }];
  }
  if (typeof s !== "string") return [];
  return [{ title: `Change to \`${s}\``, kind: "quickfix", issue, isPreferred: true, edits: [{ span: issue.span, newText: s }] }];
}

/** Complete the missing partial loss from the given one by the integral form (when it is closed-form and proper). */
function fixMissingPartial(doc: DocumentAnalysis, issue: Issue): CodeAction[] {
  const loss = lossOf(doc, issue);
  if (!loss) return [];
  const missing = issue.data?.["missing"] === "l1" ? "l1" : issue.data?.["missing"] === "l0" ? "l0" : null;
  if (!missing) return [];
  const given = missing === "l1" ? "l0" : "l1";
  const c = clauseExpr(doc.model, loss, given);
  if (!c || c.variable !== "q" || !c.d1) return [];
  const body = completePartial(given, c.d1, "q");
  if (!body) return [];
  const clause = loss.clauses.get(given)!;
  const newText = `${eolOf(doc.text)}${indentAt(doc.text, clause.span.start)}${missing}(q) = ${body}`;
  return [{
    title: `Add \`${missing}(q) = ${body}\` (the proper completion of \`${given}\`)`,
    kind: "quickfix", issue, isPreferred: true,
    edits: [{ span: { start: clause.span.end, end: clause.span.end }, newText }],
  }];
}

/** Replace the partial losses by the Savage partials of the declared Bayes risk. */
function fixBayesMismatch(doc: DocumentAnalysis, issue: Issue): CodeAction[] {
  const loss = lossOf(doc, issue);
  if (!loss) return [];
  const h = clauseExpr(doc.model, loss, "bayes");
  const l1 = loss.clauses.get("l1");
  const l0 = loss.clauses.get("l0");
  if (!h || !h.d1 || h.variable !== "q" || !l1?.value || !l0?.value || l1.variable?.name !== "q" || l0.variable?.name !== "q") return [];
  const s = savagePartials(h.expr, h.d1, "q");
  return [{
    title: "Replace `l1` and `l0` by the Savage partials of the declared `bayes`",
    kind: "quickfix", issue,
    edits: [
      { span: l1.value.span, newText: showBest(s.l1, "q") },
      { span: l0.value.span, newText: showBest(s.l0, "q") },
    ],
  }];
}

/** A name for a new helper that collides with nothing in the file. */
function freshName(doc: DocumentAnalysis, base: string): string {
  const taken = (n: string) => doc.model.defs.has(n) || doc.model.globals.has(n) || doc.model.losses.some((l) => l.name === n);
  if (!taken(base)) return base;
  for (let i = 2; i < 1000; i++) if (!taken(`${base}_${i}`)) return `${base}_${i}`;
  return `${base}_${Date.now() % 100000}`;
}

/** Insert the posterior-recovery map η(q) = l0'(q)/(l0'(q) − l1'(q)) of an improper loss as a helper. */
function actionRecovery(doc: DocumentAnalysis, loss: LossInfo, issue?: Issue): CodeAction[] {
  const a = clauseExpr(doc.model, loss, "l1");
  const b = clauseExpr(doc.model, loss, "l0");
  if (!a?.d1 || !b?.d1 || a.variable !== "q" || b.variable !== "q") return [];
  const map = recoveryMap(a.d1, b.d1);
  // A map that does not depend on q recovers nothing (linear partials: the minimiser sits at 0 or 1).
  if (!dependsOn(map, "q")) return [];
  const body = show(map);
  // Loss-local parameters are not in scope at top level, so they become extra helper parameters.
  const extra = [...loss.localParams.keys()].filter((p) => new RegExp(`\\b${p}\\b`, "u").test(body));
  const helper = freshName(doc, `${loss.name}_recovery`);
  const eol = eolOf(doc.text);
  const newText = `${eol}${eol}# Posterior recovery for \`${loss.name}\`: maps the minimiser q of the conditional risk back to η.${eol}def ${helper}(${["q", ...extra].join(", ")}) = ${body}`;
  const action: CodeAction = {
    title: `Insert the posterior-recovery map of \`${loss.name}\` as \`def ${helper}\``,
    kind: issue ? "quickfix" : "refactor",
    edits: [{ span: { start: loss.decl.span.end, end: loss.decl.span.end }, newText }],
  };
  if (issue) action.issue = issue;
  return [action];
}

/** Add `link = canonical` to a loss given by partials on probabilities with no link. */
function actionCanonicalLink(doc: DocumentAnalysis, loss: LossInfo): CodeAction[] {
  if (loss.form !== "partials" || loss.clauses.has("link") || loss.hasErrors) return [];
  // The canonical link ψ′ = w is defined for proper losses only; an improper verdict rules it out.
  const verdict = doc.losses.find((r) => r.info === loss)?.analysis?.verdict;
  if (verdict === "improper") return [];
  const last = loss.decl.clauses[loss.decl.clauses.length - 1];
  if (!last) return [];
  const newText = `${eolOf(doc.text)}${indentAt(doc.text, last.span.start)}link = canonical`;
  return [{ title: "Add `link = canonical`", kind: "refactor", edits: [{ span: { start: last.span.end, end: last.span.end }, newText }] }];
}

/**
 * The code actions for a range: quick fixes for the given issues (the diagnostics the editor sent, or
 * else the document's issues overlapping the range), then loss-level refactors at the range.
 */
export function computeCodeActions(doc: DocumentAnalysis, range: Span, contextIssues?: readonly Issue[]): CodeAction[] {
  const issues = contextIssues && contextIssues.length > 0 ? contextIssues : doc.issues.filter((i) => overlaps(i.span, range));
  const out: CodeAction[] = [];
  const recoveryFor = new Set<string>();
  for (const issue of issues) {
    switch (issue.code) {
      case "unknown-name":
      case "unknown-function":
      case "unknown-clause":
      case "invalid-expect":
        out.push(...fixSuggestion(doc, issue));
        break;
      case "missing-partial":
        out.push(...fixMissingPartial(doc, issue));
        break;
      case "bayes-mismatch":
        out.push(...fixBayesMismatch(doc, issue));
        break;
      case "posterior-recovery": {
        const loss = lossOf(doc, issue);
        if (loss && !recoveryFor.has(loss.name)) {
          recoveryFor.add(loss.name);
          out.push(...actionRecovery(doc, loss, issue));
        }
        break;
      }
      default:
        break;
    }
  }
  const loss = findLossAt(doc.model, range.start);
  if (loss) {
    out.push(...actionCanonicalLink(doc, loss));
    const report = doc.losses.find((r) => r.info === loss);
    // Offered on an improper loss only when the engine found the minimiser invertible (a monotone recovery).
    if (report?.analysis?.verdict === "improper" && report.analysis.recovery?.monotone && !recoveryFor.has(loss.name)) out.push(...actionRecovery(doc, loss));
  }
  return out;
}
