/**
 * Numerically stable rewrites of expression ASTs before code is emitted. Each rule replaces a formula that
 * overflows, underflows or cancels in floating point by an equal one that does not (common practice in
 * numerical libraries):
 *
 * - ln(sigmoid(x)) → −softplus(−x);  1 − sigmoid(x) → sigmoid(−x) (so ln(1 − sigmoid(x)) → −softplus(x));
 * - 1 − normcdf(x) → normcdf(−x) (the upper tail without cancellation);
 * - ln(1 + exp(x)) and log1p(exp(x)) → softplus(x);  ln(exp(a) + exp(b)) → a + softplus(b − a) (log-sum-exp);
 * - ln(1 ± x) → log1p(±x);  exp(x) − 1 → expm1(x);  ln(exp(x)) → x;
 * - 1/(1 + exp(u)) → sigmoid(−u);  exp(u)/(1 + exp(u)) → sigmoid(u);  sigmoid(−x)/sigmoid(x) → exp(−x);
 * - ln(u/(1 − u)) → logit(u);  sigmoid(logit(u)) → u;  logit(sigmoid(x)) → x;
 * - softplus(−logit(q)) → −ln(q);  softplus(logit(q)) → −log1p(−q);  normcdf(probit(u)) → u.
 *
 * A last pass (`rewriteLogCdf`, after differentiation, since the notation has no log Φ) writes
 * ln(normcdf(x)) as lognormcdf(x) and a ratio a·e^u/normcdf(x) as a·e^(u − lognormcdf(x)), so probit
 * scores stay finite where Φ underflows (Φ(−40) ≈ 4e-350): log Φ(x) ~ −x²/2 − ln(−x√(2π)) as x → −∞
 * (Abramowitz & Stegun 1964, 26.2.12), which the targets' log-CDF functions follow.
 *
 * Sub-expressions without the variable are folded to numbers (parameters are baked in before this).
 * Clamping to [ε, 1−ε] is decided later, by the lowering, only where a singularity survives these rules.
 */
import type { Expr } from "../syntax/ast.js";
import { evalConstant } from "../semantics/compile.js";
import { call, dependsOn, num, simplify } from "../semantics/symbolic.js";

const NOSPAN = { start: 0, end: 0 };
const neg = (operand: Expr): Expr => ({ kind: "unary", op: "-", operand, span: NOSPAN });
const bin = (op: "+" | "-" | "*" | "/" | "^", left: Expr, right: Expr): Expr => ({ kind: "binary", op, left, right, span: NOSPAN });

/** Passes over the tree before giving up on a fixed point (each pass applies every rule bottom-up). */
const MAX_PASSES = 8;

/** Structural equality, ignoring spans and parentheses. */
export function sameExpr(a: Expr, b: Expr): boolean {
  while (a.kind === "paren") a = a.inner;
  while (b.kind === "paren") b = b.inner;
  if (a.kind !== b.kind) return false;
  switch (a.kind) {
    case "number": return a.value === (b as typeof a).value;
    case "name": return a.name === (b as typeof a).name;
    case "unary": return a.op === (b as typeof a).op && sameExpr(a.operand, (b as typeof a).operand);
    case "binary": {
      const bb = b as typeof a;
      return a.op === bb.op && sameExpr(a.left, bb.left) && sameExpr(a.right, bb.right);
    }
    case "if": {
      const bb = b as typeof a;
      return sameExpr(a.cond, bb.cond) && sameExpr(a.then, bb.then) && sameExpr(a.else, bb.else);
    }
    case "call": {
      const bb = b as typeof a;
      return a.callee === bb.callee && a.args.length === bb.args.length && a.args.every((x, i) => sameExpr(x, bb.args[i]!));
    }
    default:
      return false;
  }
}

const isValue = (e: Expr, v: number): boolean => e.kind === "number" && e.value === v;
type CallExpr = Extract<Expr, { kind: "call" }>;
/** Not a type guard on purpose: a false answer for one callee must not narrow the kind for the next test. */
const isCall = (e: Expr, f: string): boolean => e.kind === "call" && e.callee === f && e.args.length >= 1;
/** The first argument of a call already tested with isCall. */
const arg0 = (e: Expr): Expr => (e as CallExpr).args[0]!;
const negOf = (e: Expr): Expr | null => (e.kind === "unary" && e.op === "-" ? e.operand : null);
/** −x, written without a double minus. */
const negate = (e: Expr): Expr => negOf(e) ?? (e.kind === "number" ? num(-e.value) : neg(e));

/** True when a and b are syntactically x and −x (in either order). */
function areNegations(a: Expr, b: Expr): boolean {
  const na = negOf(a);
  const nb = negOf(b);
  return (na !== null && sameExpr(na, b)) || (nb !== null && sameExpr(nb, a));
}

/** `1 + x` or `x + 1` → x; null otherwise. */
function onePlus(e: Expr): Expr | null {
  if (e.kind !== "binary" || e.op !== "+") return null;
  if (isValue(e.left, 1)) return e.right;
  if (isValue(e.right, 1)) return e.left;
  return null;
}

/** `1 − x` → x; null otherwise. */
function oneMinus(e: Expr): Expr | null {
  return e.kind === "binary" && e.op === "-" && isValue(e.left, 1) ? e.right : null;
}

/** One rewrite at the root of e (children are already rewritten); null when no rule applies. */
function rewriteRoot(e: Expr): Expr | null {
  if (e.kind === "call") {
    const f = e.callee === "log" ? "ln" : e.callee;
    const a = e.args[0];
    if (f !== e.callee) return { ...e, callee: f };
    if (e.callee === "pow" && e.args.length === 2) return bin("^", e.args[0]!, e.args[1]!);
    if (!a) return null;
    if (f === "ln") {
      if (isCall(a, "sigmoid")) return neg(call("softplus", negate(arg0(a))));
      if (isCall(a, "exp")) return arg0(a);
      const p = onePlus(a);
      if (p !== null && isCall(p, "exp")) return call("softplus", arg0(p));
      if (p !== null) return call("log1p", p);
      const m = oneMinus(a);
      if (m !== null) return call("log1p", negate(m));
      if (a.kind === "binary" && a.op === "+" && isCall(a.left, "exp") && isCall(a.right, "exp")) {
        const x = arg0(a.left);
        const y = arg0(a.right);
        return bin("+", x, call("softplus", bin("-", y, x)));
      }
      if (a.kind === "binary" && a.op === "/") {
        const m2 = oneMinus(a.right);
        if (m2 !== null && sameExpr(m2, a.left)) return call("logit", a.left);
      }
      return null;
    }
    if (f === "log1p") {
      if (isCall(a, "exp")) return call("softplus", arg0(a));
      const n = negOf(a);
      if (n !== null && isCall(n, "sigmoid")) return neg(call("softplus", arg0(n)));
      if (n !== null && isCall(n, "normcdf")) return call("ln", call("normcdf", negate(arg0(n))));
      return null;
    }
    if (f === "sigmoid" && isCall(a, "logit")) return arg0(a);
    if (f === "normcdf" && isCall(a, "probit")) return arg0(a);
    if (f === "logit" && isCall(a, "sigmoid")) return arg0(a);
    if (f === "softplus") {
      if (isCall(a, "logit")) return neg(call("log1p", negate(arg0(a))));
      const n = negOf(a);
      if (n !== null && isCall(n, "logit")) return neg(call("ln", arg0(n)));
    }
    return null;
  }
  if (e.kind === "binary") {
    const { left: l, right: r } = e;
    if (e.op === "-") {
      if (isValue(l, 1) && isCall(r, "sigmoid")) return call("sigmoid", negate(arg0(r)));
      if (isValue(l, 1) && isCall(r, "normcdf")) return call("normcdf", negate(arg0(r)));
      if (isValue(r, 1) && isCall(l, "exp")) return call("expm1", arg0(l));
    }
    if (e.op === "+" && isValue(r, -1) && isCall(l, "exp")) return call("expm1", arg0(l));
    if (e.op === "/") {
      const p = onePlus(r);
      if (p !== null && isCall(p, "exp")) {
        if (isValue(l, 1)) return call("sigmoid", negate(arg0(p)));
        if (sameExpr(l, p)) return call("sigmoid", arg0(p));
      }
      if (isCall(l, "sigmoid") && isCall(r, "sigmoid") && areNegations(arg0(l), arg0(r))) {
        // σ(a)/σ(−a) = e^a.
        return call("exp", arg0(l));
      }
    }
  }
  return null;
}

function rewriteOnce(e: Expr, variable: string): Expr {
  let out: Expr;
  switch (e.kind) {
    case "paren":
      return rewriteOnce(e.inner, variable);
    case "unary":
      out = { ...e, operand: rewriteOnce(e.operand, variable) };
      break;
    case "binary":
      out = { ...e, left: rewriteOnce(e.left, variable), right: rewriteOnce(e.right, variable) };
      break;
    case "if":
      out = { ...e, cond: rewriteOnce(e.cond, variable), then: rewriteOnce(e.then, variable), else: rewriteOnce(e.else, variable) };
      break;
    case "call":
      out = { ...e, args: e.args.map((a) => rewriteOnce(a, variable)) };
      break;
    default:
      return e;
  }
  if (!dependsOn(out, variable) && !isConditionNode(out)) {
    const v = evalConstant(out);
    if (v !== null && Number.isFinite(v)) return num(v);
  }
  for (let i = 0; i < 4; i++) {
    const r = rewriteRoot(out);
    if (r === null) break;
    out = r;
  }
  return out;
}

function isConditionNode(e: Expr): boolean {
  if (e.kind === "unary") return e.op === "not";
  return e.kind === "binary" && ["<", "<=", ">", ">=", "and", "or"].includes(e.op);
}

const key = (e: Expr): string => JSON.stringify(e, (k, v) => (k === "span" || k === "calleeSpan" || k === "text" ? undefined : v));

/** Applies the stable rewrites (and constant folding) to a fixed point, then simplifies. */
export function rewriteStable(e: Expr, variable: string): Expr {
  let cur = simplify(e);
  let prev = key(cur);
  for (let i = 0; i < MAX_PASSES; i++) {
    cur = simplify(rewriteOnce(cur, variable));
    const k = key(cur);
    if (k === prev) break;
    prev = k;
  }
  return cur;
}

/** `x·e^u` (through minus signs, products and numerators) with e^u replaced by e^(u − lognormcdf(c)); null without an exp factor. */
function absorbExp(e: Expr, c: Expr): Expr | null {
  while (e.kind === "paren") e = e.inner;
  if (isCall(e, "exp")) return call("exp", bin("-", arg0(e), call("lognormcdf", c)));
  if (e.kind === "unary" && e.op === "-") {
    const r = absorbExp(e.operand, c);
    return r ? neg(r) : null;
  }
  if (e.kind === "binary" && e.op === "*") {
    const l = absorbExp(e.left, c);
    if (l) return bin("*", l, e.right);
    const r = absorbExp(e.right, c);
    return r ? bin("*", e.left, r) : null;
  }
  if (e.kind === "binary" && e.op === "/") {
    const l = absorbExp(e.left, c);
    return l ? bin("/", l, e.right) : null;
  }
  return null;
}

function logCdfOnce(e: Expr): Expr {
  let out: Expr;
  switch (e.kind) {
    case "paren":
      return logCdfOnce(e.inner);
    case "unary":
      out = { ...e, operand: logCdfOnce(e.operand) };
      break;
    case "binary":
      out = { ...e, left: logCdfOnce(e.left), right: logCdfOnce(e.right) };
      break;
    case "if":
      out = { ...e, cond: logCdfOnce(e.cond), then: logCdfOnce(e.then), else: logCdfOnce(e.else) };
      break;
    case "call":
      out = { ...e, args: e.args.map(logCdfOnce) };
      break;
    default:
      return e;
  }
  if (out.kind === "call" && (out.callee === "ln" || out.callee === "log") && out.args.length === 1 && isCall(out.args[0]!, "normcdf")) {
    return call("lognormcdf", arg0(out.args[0]!));
  }
  if (out.kind === "binary" && out.op === "/" && isCall(out.right, "normcdf")) {
    const r = absorbExp(out.left, arg0(out.right));
    if (r) return r;
  }
  return out;
}

/** The log-CDF pass (see the module comment): applied to the final loss and gradient expressions. */
export function rewriteLogCdf(e: Expr): Expr {
  return simplify(logCdfOnce(e));
}
