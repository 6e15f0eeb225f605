/**
 * The one expression printer (server/src/codegen/print.ts) in its Python and TypeScript dialects: a table
 * of precedence, associativity and parenthesisation cases, each printed as the language reads it.
 * Python: The Python Language Reference, §6.5 "The power operator" (`**` binds tighter than a unary minus
 * on its left, less tightly than one on its right; right-associative) and §6.17 "Operator precedence".
 * TypeScript: ECMA-262 (ECMAScript Language Specification), §13 "ECMAScript Language: Expressions"
 * (`--` is the decrement operator, so a double negation needs parentheses).
 */
import { describe, expect, it } from "vitest";
import { NUMPY_DIALECT } from "../../server/src/codegen/emit-numpy.js";
import { TORCH_DIALECT } from "../../server/src/codegen/emit-torch.js";
import { TS_DIALECT } from "../../server/src/codegen/emit-ts.js";
import { printExpr, type Dialect } from "../../server/src/codegen/print.js";
import type { BinaryOp, Expr } from "../../server/src/syntax/ast.js";

const S = { start: 0, end: 0 };
const n = (value: number): Expr => ({ kind: "number", value, text: String(value), span: S });
const v = (name: string): Expr => ({ kind: "name", name, span: S });
const neg = (operand: Expr): Expr => ({ kind: "unary", op: "-", operand, span: S });
const not = (operand: Expr): Expr => ({ kind: "unary", op: "not", operand, span: S });
const bin = (op: BinaryOp) => (left: Expr, right: Expr): Expr => ({ kind: "binary", op, left, right, span: S });
const [add, sub, mul, div, pow, lt, and, or] = (["+", "-", "*", "/", "^", "<", "and", "or"] as const).map(bin) as [
  ReturnType<typeof bin>, ReturnType<typeof bin>, ReturnType<typeof bin>, ReturnType<typeof bin>,
  ReturnType<typeof bin>, ReturnType<typeof bin>, ReturnType<typeof bin>, ReturnType<typeof bin>,
];
const iff = (cond: Expr, then: Expr, otherwise: Expr): Expr => ({ kind: "if", cond, then, else: otherwise, span: S });
const call = (callee: string, ...args: Expr[]): Expr => ({ kind: "call", callee, calleeSpan: S, args, span: S });
const paren = (inner: Expr): Expr => ({ kind: "paren", inner, span: S });
const [a, b, c, q] = ["a", "b", "c", "q"].map(v) as [Expr, Expr, Expr, Expr];

/** [case, expression, NumPy, TypeScript]. */
const CASES: [string, Expr, string, string][] = [
  ["a − (b − c): the right operand of − is parenthesised", sub(a, sub(b, c)), "a - (b - c)", "a - (b - c)"],
  ["(a − b) − c: left-associative, no parentheses", sub(sub(a, b), c), "a - b - c", "a - b - c"],
  ["a / (b · c)", div(a, mul(b, c)), "a / (b * c)", "a / (b * c)"],
  ["(a / b) · c", mul(div(a, b), c), "a / b * c", "a / b * c"],
  ["(a + b) · c", mul(add(a, b), c), "(a + b) * c", "(a + b) * c"],
  ["a + b · c", add(a, mul(b, c)), "a + b * c", "a + b * c"],
  ["source parentheses are not kept: ((a)) + (b · c)", add(paren(paren(a)), paren(mul(b, c))), "a + b * c", "a + b * c"],
  ["−(x²): ** binds tighter than the minus on its left", neg(pow(q, n(2))), "-q ** 2", "-Math.pow(q, 2)"],
  ["(−x)²", pow(neg(q), n(2)), "(-q) ** 2", "Math.pow(-q, 2)"],
  ["(a^b)^c", pow(pow(a, b), c), "(a ** b) ** c", "Math.pow(Math.pow(a, b), c)"],
  ["a^(b^c): ** is right-associative", pow(a, pow(b, c)), "a ** b ** c", "Math.pow(a, Math.pow(b, c))"],
  ["a^(−b): a minus on the right of ** needs no parentheses", pow(a, neg(b)), "a ** -b", "Math.pow(a, -b)"],
  ["(−2)^2 with a negative literal", pow(n(-2), n(2)), "(-2) ** 2", "Math.pow(-2, 2)"],
  ["(a · b)^2", pow(mul(a, b), n(2)), "(a * b) ** 2", "Math.pow(a * b, 2)"],
  ["pow(a, b) prints as the power", call("pow", a, add(b, n(1))), "a ** (b + 1)", "Math.pow(a, b + 1)"],
  ["−(−x): Python reads --x as a double negation, TypeScript as a decrement", neg(neg(q)), "--q", "-(-q)"],
  ["a − (−2)", sub(a, n(-2)), "a - -2", "a - -2"],
  ["−(a + b)", neg(add(a, b)), "-(a + b)", "-(a + b)"],
  ["2 · −∞", mul(n(2), n(-Infinity)), '2 * -float("inf")', "2 * -Infinity"],
  ["NaN and +∞ literals", add(n(NaN), n(Infinity)), 'float("nan") + float("inf")', "NaN + Infinity"],
  ["(a < b) < c: comparisons never chain", lt(lt(a, b), c), "(a < b) < c", "(a < b) < c"],
  ["a + b < c", lt(add(a, b), c), "a + b < c", "a + b < c"],
  [
    "nested conditionals in the else branch",
    iff(lt(q, n(0.3)), a, iff(lt(q, n(0.6)), b, c)),
    "np.where(q < 0.3, a, np.where(q < 0.6, b, c))",
    "q < 0.3 ? a : q < 0.6 ? b : c",
  ],
  [
    "nested conditionals in the then branch",
    iff(lt(q, n(0.3)), iff(lt(q, n(0.1)), a, b), c),
    "np.where(q < 0.3, np.where(q < 0.1, a, b), c)",
    "q < 0.3 ? q < 0.1 ? a : b : c",
  ],
  ["a conditional as an operand", add(n(1), iff(lt(q, n(0.5)), a, b)), "1 + np.where(q < 0.5, a, b)", "1 + (q < 0.5 ? a : b)"],
  [
    "and, or, not",
    and(or(lt(a, b), lt(b, c)), not(lt(q, a))),
    "np.logical_and(np.logical_or(a < b, b < c), np.logical_not(q < a))",
    "(a < b || b < c) && !(q < a)",
  ],
  ["a or (b and c): and binds tighter", or(lt(a, b), and(lt(b, c), lt(c, q))), "np.logical_or(a < b, np.logical_and(b < c, c < q))", "a < b || b < c && c < q"],
  ["logit(q) expands to ln q − log1p(−q)", call("logit", q), "np.log(q) - np.log1p(-q)", "Math.log(q) - Math.log1p(-q)"],
  ["2 · logit(q): the expansion is a difference", mul(n(2), call("logit", q)), "2 * (np.log(q) - np.log1p(-q))", "2 * (Math.log(q) - Math.log1p(-q))"],
  ["calls take arguments without parentheses", call("exp", neg(add(a, b))), "np.exp(-(a + b))", "Math.exp(-(a + b))"],
  ["min and max", sub(call("min", q, n(0.5)), call("max", a, b)), "np.minimum(q, 0.5) - np.maximum(a, b)", "Math.min(q, 0.5) - Math.max(a, b)"],
];

const print = (e: Expr, d: Dialect, used = new Set<string>()) => printExpr(e, d, used, "q");

describe("expression printer: one precedence table, per-language dialects", () => {
  for (const [what, e, py, ts] of CASES) {
    it(what, () => {
      expect(print(e, NUMPY_DIALECT)).toBe(py);
      expect(print(e, TS_DIALECT)).toBe(ts);
    });
  }

  it("PyTorch spells a constant bound of min/max as torch.clamp and broadcasts constant branches of a select", () => {
    expect(print(call("min", q, n(0.5)), TORCH_DIALECT)).toBe("torch.clamp(q, max=0.5)");
    expect(print(call("max", n(0.1), q), TORCH_DIALECT)).toBe("torch.clamp(q, min=0.1)");
    expect(print(iff(lt(q, n(0.5)), n(1), q), TORCH_DIALECT)).toBe("torch.where(q < 0.5, torch.full_like(q, 1), q)");
  });

  it("records the helpers a spelling needs", () => {
    const py = new Set<string>();
    print(add(call("sigmoid", q), call("probit", q)), NUMPY_DIALECT, py);
    // _probit refines through _normcdf, which evaluates _erfc (and its Cody helpers).
    expect([...py].sort()).toEqual(["_erfc", "_normcdf", "_probit", "_sigmoid"]);
    const ts = new Set<string>();
    print(call("probit", q), TS_DIALECT, ts);
    // probit refines through normcdf, which needs erf and erfc.
    expect([...ts].sort()).toEqual(["erf", "erfc", "normcdf", "probit"]);
  });

  it("refuses a function without a spelling and an expression with a syntax error", () => {
    expect(() => print(call("nosuch", q), NUMPY_DIALECT)).toThrow("no np spelling for `nosuch`");
    expect(() => print(call("nosuch", q), TS_DIALECT)).toThrow("no TypeScript spelling for `nosuch`");
    expect(() => print({ kind: "error", span: S }, TS_DIALECT)).toThrow(/syntax error/);
  });
});
