/**
 * The one expression printer of the code generators: precedence, associativity, parenthesisation, unary
 * minus, power, calls and conditionals. What differs between target languages (number literals, the power
 * operator or function, logical operators or functions, the conditional, function names) is data in a
 * `Dialect`; the Python dialects are built in `emit-python-common.ts`, the TypeScript one in `emit-ts.ts`.
 * Pure: expression in, text out.
 */
import type { Expr } from "../syntax/ast.js";

/**
 * Binding strength of printed expressions, loosest first (higher binds tighter); one table for every
 * target. Python and TypeScript agree on this order for the operators printed here: conditional, `or`,
 * `and`, comparisons, `+ -`, `* /`, prefix operators, the power operator (Python's `**`), atoms.
 */
export const PREC = { cond: 1, or: 2, and: 3, cmp: 4, add: 5, mul: 6, unary: 7, pow: 8, atom: 9 } as const;

/** How one function of the notation is written: a function name (arguments joined by commas), or a printer of the printed arguments. */
export type Spelling =
  | string
  | {
      /** `args` are the printed arguments, `raw` the argument expressions, `variable` the array or scalar in scope. */
      print: (args: string[], raw: readonly Expr[], variable: string) => string;
      /** Module-level helpers the spelling needs (recorded in the `used` set). */
      helpers?: readonly string[];
    };

/** A function spelled by name that needs module-level helpers. */
export function helperCall(fn: string, helpers: readonly string[]): Spelling {
  return { print: (args) => `${fn}(${args.join(", ")})`, helpers };
}

export interface Dialect {
  /** The name used when a function has no spelling ("no <name> spelling for `f`"). */
  name: string;
  /** A number literal that round-trips (non-finite values included). */
  number(v: number): string;
  /** `^`: an infix operator (right-associative, binding tighter than a prefix minus on its left, as Python's `**`) or a function of two arguments. */
  power: { infix: string } | { fn: string };
  /** `and`, `or`, `not`: operators (`&&`, `||`, `!`; `not` is a prefix operator) or elementwise functions (`np.logical_and`, …). */
  logic: { kind: "operator" | "function"; and: string; or: string; not: string };
  /** `if c then a else b`: the ternary operator `c ? a : b`, or a function of the printed parts (an elementwise select). */
  conditional: "ternary" | ((cond: string, then: string, otherwise: string, rawThen: Expr, rawElse: Expr, variable: string) => string);
  /**
   * Binding required of the operand of a prefix operator: `PREC.unary` prints `- -x` as `--x` (Python reads it
   * as a double negation), `PREC.pow` parenthesises it as `-(-x)` (TypeScript would read `--` as a decrement).
   */
  prefixOperand: number;
  /** Spellings of the notation's functions, by notation name. */
  calls: Readonly<Record<string, Spelling>>;
}

const NOSPAN = { start: 0, end: 0 };

/**
 * Expansions of functions no target has built in, in functions every target has:
 * logit(u) = ln(u) − ln(1 − u), the second term through log1p for accuracy near u = 0 (common practice).
 */
function expand(callee: string, args: readonly Expr[]): Expr | null {
  if (callee !== "logit" || args.length !== 1) return null;
  const u = args[0]!;
  const call = (f: string, a: Expr): Expr => ({ kind: "call", callee: f, calleeSpan: NOSPAN, args: [a], span: NOSPAN });
  return { kind: "binary", op: "-", left: call("ln", u), right: call("log1p", { kind: "unary", op: "-", operand: u, span: NOSPAN }), span: NOSPAN };
}

/** Prints an expression in the dialect; `variable` is the array in scope (for selects that broadcast constants); helpers needed are added to `used`. */
export function printExpr(e: Expr, d: Dialect, used: Set<string>, variable = ""): string {
  /** The printed expression, parenthesised when it binds looser than its context requires. */
  const p = (x: Expr, ctx: number): string => {
    const [s, level] = go(x);
    return level < ctx ? `(${s})` : s;
  };
  /** Left-associative infix: the left operand may bind as loosely as the operator, the right one must bind tighter. */
  const infix = (l: Expr, op: string, r: Expr, level: number): [string, number] => [`${p(l, level)} ${op} ${p(r, level + 1)}`, level];
  const power = (l: Expr, r: Expr): [string, number] =>
    "infix" in d.power ? [`${p(l, PREC.atom)} ${d.power.infix} ${p(r, PREC.unary)}`, PREC.pow] : [`${d.power.fn}(${p(l, 0)}, ${p(r, 0)})`, PREC.atom];
  const go = (x: Expr): [string, number] => {
    switch (x.kind) {
      case "number":
        return [d.number(x.value), x.value < 0 || Object.is(x.value, -0) ? PREC.unary : PREC.atom];
      case "name":
        return [x.name, PREC.atom];
      case "paren":
        return go(x.inner);
      case "unary":
        if (x.op === "not" && d.logic.kind === "function") return [`${d.logic.not}(${p(x.operand, 0)})`, PREC.atom];
        return [`${x.op === "not" ? d.logic.not : x.op}${p(x.operand, d.prefixOperand)}`, PREC.unary];
      case "binary":
        switch (x.op) {
          case "and":
          case "or":
            if (d.logic.kind === "function") return [`${d.logic[x.op]}(${p(x.left, 0)}, ${p(x.right, 0)})`, PREC.atom];
            return infix(x.left, d.logic[x.op], x.right, PREC[x.op]);
          case "<":
          case "<=":
          case ">":
          case ">=":
            // Both sides bind tighter: Python would read a < b < c as a chain.
            return [`${p(x.left, PREC.cmp + 1)} ${x.op} ${p(x.right, PREC.cmp + 1)}`, PREC.cmp];
          case "+":
          case "-":
            return infix(x.left, x.op, x.right, PREC.add);
          case "*":
          case "/":
            return infix(x.left, x.op, x.right, PREC.mul);
          case "^":
            return power(x.left, x.right);
        }
        break;
      case "if":
        if (d.conditional === "ternary") return [`${p(x.cond, PREC.or)} ? ${p(x.then, PREC.cond)} : ${p(x.else, PREC.cond)}`, PREC.cond];
        return [d.conditional(p(x.cond, 0), p(x.then, 0), p(x.else, 0), x.then, x.else, variable), PREC.atom];
      case "call": {
        const expanded = expand(x.callee, x.args);
        if (expanded) return go(expanded);
        if (x.callee === "pow" && x.args.length === 2) return power(x.args[0]!, x.args[1]!);
        const spelling = d.calls[x.callee];
        if (spelling === undefined) throw new Error(`no ${d.name} spelling for \`${x.callee}\``);
        const args = x.args.map((a) => p(a, 0));
        if (typeof spelling === "string") return [`${spelling}(${args.join(", ")})`, PREC.atom];
        for (const h of spelling.helpers ?? []) used.add(h);
        return [spelling.print(args, x.args, variable), PREC.atom];
      }
      case "error":
        throw new Error("cannot print an expression with a syntax error");
    }
    throw new Error("unreachable");
  };
  return p(e, 0);
}
