/**
 * Symbolic manipulation of expression ASTs: inlining `def` helpers, substitution, differentiation with
 * respect to the clause variable, and light algebraic simplification so derived formulas read well.
 *
 * Why not mathjs's `derivative`: it has no rule for piecewise `if … then … else`, `min`/`max`, and several
 * built-ins of the notation (`erf`, `normcdf`, `probit`, `sigmoid`, `softplus`, `logit`, `log1p`, `expm1`),
 * and it works on its own node type without source spans. The rules here are the textbook ones; tests
 * compare them with central finite differences and with mathjs's `derivative` where mathjs has the rule.
 */
import type { BinaryOp, Expr } from "../syntax/ast.js";
import { forEachExpr } from "../syntax/ast.js";
import type { Span } from "../issue.js";

const NOSPAN: Span = { start: 0, end: 0 };

export const num = (value: number): Expr => ({ kind: "number", value, text: numberText(value), span: NOSPAN });
export const name = (n: string): Expr => ({ kind: "name", name: n, span: NOSPAN });
export const call = (callee: string, ...args: Expr[]): Expr => ({ kind: "call", callee, calleeSpan: NOSPAN, args, span: NOSPAN });
/** Unary minus, without simplification. */
export const negate = (operand: Expr): Expr => ({ kind: "unary", op: "-", operand, span: NOSPAN });
/** A binary node, without simplification. */
export const op = (o: BinaryOp, left: Expr, right: Expr): Expr => ({ kind: "binary", op: o, left, right, span: NOSPAN });
const neg = negate;
const bin = op;
const ifx = (cond: Expr, then: Expr, otherwise: Expr): Expr => ({ kind: "if", cond, then, else: otherwise, span: NOSPAN });

function numberText(v: number): string {
  if (Number.isInteger(v) && Math.abs(v) < 1e15) return String(v);
  return String(Number(v.toPrecision(15)));
}

export function isNum(e: Expr): e is Extract<Expr, { kind: "number" }> {
  return e.kind === "number";
}

/** True when e is the number v (not a type guard: false says nothing about e's kind). */
function isValue(e: Expr, v: number): boolean {
  return e.kind === "number" && e.value === v;
}

/** True when the expression mentions `variable`. */
export function dependsOn(e: Expr, variable: string): boolean {
  let found = false;
  forEachExpr(e, (x) => {
    if (x.kind === "name" && x.name === variable) found = true;
  });
  return found;
}

/** Replaces names by expressions (capture-free: helpers' parameters are distinct from their arguments' names by construction). */
export function substitute(e: Expr, bindings: ReadonlyMap<string, Expr>): Expr {
  switch (e.kind) {
    case "name":
      return bindings.get(e.name) ?? e;
    case "paren":
      return { ...e, inner: substitute(e.inner, bindings) };
    case "unary":
      return { ...e, operand: substitute(e.operand, bindings) };
    case "binary":
      return { ...e, left: substitute(e.left, bindings), right: substitute(e.right, bindings) };
    case "if":
      return { ...e, cond: substitute(e.cond, bindings), then: substitute(e.then, bindings), else: substitute(e.else, bindings) };
    case "call":
      return { ...e, args: e.args.map((a) => substitute(a, bindings)) };
    default:
      return e;
  }
}

/** Inlines calls of `def` helpers (non-recursive, checked by the semantic layer) so only built-ins remain. */
export function inlineDefs(e: Expr, defs: ReadonlyMap<string, { params: string[]; body: Expr }>, depth = 0): Expr {
  if (depth > 50) throw new Error("helper nesting too deep to inline");
  const rec = (x: Expr): Expr => inlineDefs(x, defs, depth);
  switch (e.kind) {
    case "call": {
      const args = e.args.map(rec);
      const def = defs.get(e.callee);
      if (!def) return { ...e, args };
      const bindings = new Map(def.params.map((p, i) => [p, { kind: "paren", inner: args[i]!, span: NOSPAN } as Expr]));
      return { kind: "paren", inner: inlineDefs(substitute(def.body, bindings), defs, depth + 1), span: e.span };
    }
    case "paren":
      return { ...e, inner: rec(e.inner) };
    case "unary":
      return { ...e, operand: rec(e.operand) };
    case "binary":
      return { ...e, left: rec(e.left), right: rec(e.right) };
    case "if":
      return { ...e, cond: rec(e.cond), then: rec(e.then), else: rec(e.else) };
    default:
      return e;
  }
}

export class NotDifferentiable extends Error {}

/** d/dx of e, simplified. Throws NotDifferentiable for unknown calls (callers then fall back to numeric derivatives). */
export function differentiate(e: Expr, x: string): Expr {
  return simplify(d(e, x));
}

function d(e: Expr, x: string): Expr {
  if (!dependsOn(e, x)) return num(0);
  switch (e.kind) {
    case "number":
      return num(0);
    case "name":
      return num(e.name === x ? 1 : 0);
    case "paren":
      return d(e.inner, x);
    case "unary":
      if (e.op === "-") return neg(d(e.operand, x));
      if (e.op === "+") return d(e.operand, x);
      throw new NotDifferentiable("a condition has no derivative");
    case "if":
      return ifx(e.cond, d(e.then, x), d(e.else, x));
    case "binary": {
      const u = e.left;
      const v = e.right;
      switch (e.op) {
        case "+": return bin("+", d(u, x), d(v, x));
        case "-": return bin("-", d(u, x), d(v, x));
        case "*": return bin("+", bin("*", d(u, x), v), bin("*", u, d(v, x)));
        case "/":
          // A constant denominator keeps its place: (u/c)' = u'/c reads better than the quotient rule's (u'c − 0)/c².
          if (!dependsOn(v, x)) return bin("/", d(u, x), v);
          return bin("/", bin("-", bin("*", d(u, x), v), bin("*", u, d(v, x))), bin("^", v, num(2)));
        case "^": return dPow(u, v, x);
        default: throw new NotDifferentiable("a condition has no derivative");
      }
    }
    case "call":
      return dCall(e.callee, e.args, x);
    case "error":
      throw new NotDifferentiable("syntax error");
  }
}

function dPow(u: Expr, v: Expr, x: string): Expr {
  if (!dependsOn(v, x)) {
    // d(u^c) = c·u^(c−1)·u'
    return bin("*", bin("*", v, bin("^", u, bin("-", v, num(1)))), d(u, x));
  }
  if (!dependsOn(u, x)) {
    // d(c^v) = c^v·ln(c)·v'
    return bin("*", bin("*", bin("^", u, v), call("ln", u)), d(v, x));
  }
  // d(u^v) = u^v·(v'·ln u + v·u'/u)
  return bin("*", bin("^", u, v), bin("+", bin("*", d(v, x), call("ln", u)), bin("/", bin("*", v, d(u, x)), u)));
}

function dCall(f: string, args: Expr[], x: string): Expr {
  const a = args[0]!;
  const da = () => d(a, x);
  const chain = (outer: Expr) => bin("*", outer, da());
  switch (f) {
    case "ln":
    case "log": return bin("/", da(), a);
    case "log2": return bin("/", da(), bin("*", a, call("ln", num(2))));
    case "log10": return bin("/", da(), bin("*", a, call("ln", num(10))));
    case "exp": return chain(call("exp", a));
    case "sqrt": return bin("/", da(), bin("*", num(2), call("sqrt", a)));
    case "abs": return ifx(bin("<", a, num(0)), neg(da()), da());
    case "min": return ifx(bin("<=", a, args[1]!), da(), d(args[1]!, x));
    case "max": return ifx(bin(">=", a, args[1]!), da(), d(args[1]!, x));
    case "pow": return dPow(a, args[1]!, x);
    case "sin": return chain(call("cos", a));
    case "cos": return neg(chain(call("sin", a)));
    case "tan": return bin("/", da(), bin("^", call("cos", a), num(2)));
    case "asin": return bin("/", da(), call("sqrt", bin("-", num(1), bin("^", a, num(2)))));
    case "acos": return neg(bin("/", da(), call("sqrt", bin("-", num(1), bin("^", a, num(2))))));
    case "atan": return bin("/", da(), bin("+", num(1), bin("^", a, num(2))));
    case "sinh": return chain(call("cosh", a));
    case "cosh": return chain(call("sinh", a));
    case "tanh": return chain(bin("-", num(1), bin("^", call("tanh", a), num(2))));
    case "log1p": return bin("/", da(), bin("+", num(1), a));
    case "expm1": return chain(call("exp", a));
    case "sigmoid": return chain(bin("*", call("sigmoid", a), bin("-", num(1), call("sigmoid", a))));
    case "logit": return bin("/", da(), bin("*", a, bin("-", num(1), a)));
    case "softplus": return chain(call("sigmoid", a));
    case "erf": return chain(bin("*", bin("/", num(2), call("sqrt", name("pi"))), call("exp", neg(bin("^", a, num(2))))));
    case "normcdf": return chain(bin("/", call("exp", neg(bin("/", bin("^", a, num(2)), num(2)))), call("sqrt", bin("*", num(2), name("pi")))));
    case "probit": return chain(bin("*", call("sqrt", bin("*", num(2), name("pi"))), call("exp", bin("/", bin("^", call("probit", a), num(2)), num(2)))));
    default: throw new NotDifferentiable(`no derivative rule for \`${f}\``);
  }
}

/** Removes parentheses nodes whose grouping the printer can reconstruct, then folds constants and identities. */
export function simplify(e: Expr): Expr {
  let prev = "";
  let cur = e;
  // A few passes reach a fixed point for the identities below; the cap guards against oscillation.
  for (let i = 0; i < 6; i++) {
    cur = simplifyOnce(cur);
    const key = JSON.stringify(cur, (k, v) => (k === "span" || k === "calleeSpan" ? undefined : v));
    if (key === prev) break;
    prev = key;
  }
  return cur;
}

function simplifyOnce(e: Expr): Expr {
  switch (e.kind) {
    case "paren":
      return simplifyOnce(e.inner);
    case "unary": {
      const a = simplifyOnce(e.operand);
      if (e.op === "+") return a;
      if (e.op === "-") {
        if (isNum(a)) return num(-a.value);
        if (a.kind === "unary" && a.op === "-") return a.operand;
      }
      return { ...e, operand: a };
    }
    case "binary": {
      const l = simplifyOnce(e.left);
      const r = simplifyOnce(e.right);
      if (isNum(l) && isNum(r) && ["+", "-", "*", "/", "^"].includes(e.op)) {
        const v = fold(e.op, l.value, r.value);
        if (Number.isFinite(v) && (Number.isInteger(v) || e.op !== "/")) return num(v);
      }
      switch (e.op) {
        case "+":
          if (isValue(l, 0)) return r;
          if (isValue(r, 0)) return l;
          if (r.kind === "unary" && r.op === "-") return bin("-", l, r.operand);
          if (isNum(r) && r.value < 0) return bin("-", l, num(-r.value));
          break;
        case "-":
          if (isValue(r, 0)) return l;
          if (isValue(l, 0)) return neg(r);
          if (r.kind === "unary" && r.op === "-") return bin("+", l, r.operand);
          break;
        case "*":
          if (isValue(l, 0) || isValue(r, 0)) return num(0);
          if (isValue(l, 1)) return r;
          if (isValue(r, 1)) return l;
          if (isValue(l, -1)) return neg(r);
          if (isValue(r, -1)) return neg(l);
          if (l.kind === "unary" && l.op === "-") return neg(bin("*", l.operand, r));
          if (r.kind === "unary" && r.op === "-") return neg(bin("*", l, r.operand));
          if (isNum(r) && !isNum(l)) return bin("*", r, l);
          break;
        case "/":
          if (isValue(l, 0)) return num(0);
          if (isValue(r, 1)) return l;
          if (l.kind === "unary" && l.op === "-") return neg(bin("/", l.operand, r));
          break;
        case "^":
          if (isValue(r, 1)) return l;
          if (isValue(r, 0)) return num(1);
          break;
        default:
          break;
      }
      return { ...e, left: l, right: r };
    }
    case "if": {
      const t = simplifyOnce(e.then);
      const o = simplifyOnce(e.else);
      const same = JSON.stringify(strip(t)) === JSON.stringify(strip(o));
      if (same) return t;
      return { ...e, cond: simplifyOnce(e.cond), then: t, else: o };
    }
    case "call":
      return { ...e, args: e.args.map(simplifyOnce) };
    default:
      return e;
  }
}

function strip(e: Expr): unknown {
  return JSON.parse(JSON.stringify(e, (k, v) => (k === "span" || k === "calleeSpan" ? undefined : v)));
}

function fold(op: string, a: number, b: number): number {
  switch (op) {
    case "+": return a + b;
    case "-": return a - b;
    case "*": return a * b;
    case "/": return a / b;
    case "^": return Math.pow(a, b);
    default: return NaN;
  }
}

/**
 * Sign and reciprocal rewrites `simplify` leaves out, so derived formulas read as people write them:
 * (−1)/y → −(1/y), a·(1/b) → a/b, a·(−b) → −(a·b), a − (−b) → a + b, a + (−b) → a − b, −(−a) → a.
 */
export function tidy(e: Expr): Expr {
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
          if (l.kind === "number" && l.value < 0) return neg(bin("/", num(-l.value), r));
          if (isNeg(l)) return neg(bin("/", l.operand, r));
          break;
        case "*":
          if (isRecip(r)) return tidy(bin("/", l, r.right));
          if (isRecip(l)) return tidy(bin("/", r, l.right));
          if (isNeg(r)) return neg(tidy(bin("*", l, r.operand)));
          if (isNeg(l)) return neg(tidy(bin("*", l.operand, r)));
          break;
        case "-":
          if (isNeg(r)) return bin("+", l, r.operand);
          break;
        case "+":
          if (isNeg(r)) return bin("-", l, r.operand);
          if (isNeg(l)) return bin("-", r, l.operand);
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

const PREC: Record<string, number> = { or: 1, and: 2, "<": 4, "<=": 4, ">": 4, ">=": 4, "+": 5, "-": 5, "*": 6, "/": 6, "^": 8 };

/**
 * Prints an expression with the fewest parentheses that keep its meaning (the notation's precedence:
 * `^` right-associative and tighter than unary minus). Used for derived formulas in hovers and messages.
 */
export function printExpr(e: Expr): string {
  return p(e, 0);
}

function p(e: Expr, ctx: number): string {
  switch (e.kind) {
    case "number":
      // A negative number (made by constant folding) reads like a unary minus, so it needs the same
      // brackets: `(-2)^q`, not `-2^q`, which means `-(2^q)`.
      return e.value < 0 && ctx > 7 ? `(${e.text})` : e.text;
    case "name":
      return e.name;
    case "paren":
      return p(e.inner, ctx);
    case "call":
      return `${e.callee}(${e.args.map((a) => p(a, 0)).join(", ")})`;
    case "unary": {
      const s = e.op === "not" ? `not ${p(e.operand, 3)}` : `${e.op}${p(e.operand, 7)}`;
      const prec = e.op === "not" ? 3 : 7;
      return prec < ctx ? `(${s})` : s;
    }
    case "binary": {
      const prec = PREC[e.op]!;
      const rightAssoc = e.op === "^";
      const left = p(e.left, rightAssoc ? prec + 1 : prec);
      const signed = e.right.kind === "unary" || (e.right.kind === "number" && e.right.value < 0);
      const right = p(e.right, rightAssoc ? (signed ? 7 : prec) : prec + 1);
      const s = e.op === "^" ? `${left}^${right}` : `${left} ${e.op} ${right}`;
      return prec < ctx ? `(${s})` : s;
    }
    case "if": {
      const s = `if ${p(e.cond, 0)} then ${p(e.then, 0)} else ${p(e.else, 0)}`;
      return ctx > 0 ? `(${s})` : s;
    }
    case "error":
      return "…";
  }
}
