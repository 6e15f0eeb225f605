/**
 * Compiles expression ASTs to JavaScript closures: no `eval`, no `new Function` — each node becomes a
 * small closure over its children. Names resolve through a scope object to a variable slot, a parameter
 * slot or a constant; calls resolve only to whitelisted built-ins or compiled `def` helpers.
 * Resolution uses `Map`s, so names such as `__proto__` or `constructor` are plain identifiers.
 */
import type { Expr } from "../syntax/ast.js";
import { BUILTINS, CONSTANTS } from "./builtins.js";

/** A compiled expression: `x` is the clause variable, `p` the parameter vector. */
export type Compiled = (x: number, p: Float64Array) => number;
type CompiledBool = (x: number, p: Float64Array) => boolean;

export interface CompileScope {
  /** Name of the clause variable (`q` or `v`), or null inside `def` bodies and constant expressions. */
  variable: string | null;
  /** Parameter name → slot in the parameter vector. */
  paramSlots: ReadonlyMap<string, number>;
  /** Compiled `def` helpers by name: they take their arguments and the same parameter vector. */
  defs: ReadonlyMap<string, (args: number[], p: Float64Array) => number>;
  /** Local names of a `def` body (its parameters) → argument index. */
  locals?: ReadonlyMap<string, number>;
}

export class CompileError extends Error {}

/** Compiles a numeric expression. Throws CompileError only for ASTs the semantic layer already rejected. */
export function compileExpr(e: Expr, scope: CompileScope): Compiled {
  return new Compiler(scope).value(e);
}

/** Compiles a `def` body into a function of its arguments. */
export function compileDef(body: Expr, paramNames: string[], scope: Omit<CompileScope, "locals" | "variable">): (args: number[], p: Float64Array) => number {
  const locals = new Map(paramNames.map((n, i) => [n, i]));
  const c = new Compiler({ ...scope, variable: null, locals });
  // Arguments are passed through a per-call frame stored in a closure variable (no allocation per node).
  const body0 = c.valueWithFrame(body);
  return (args, p) => body0(args, p);
}

class Compiler {
  constructor(private readonly scope: CompileScope) {}

  value(e: Expr): Compiled {
    const f = this.valueWithFrame(e);
    return (x, p) => f([x], p);
  }

  /**
   * Compiles to a function of a frame: frame[0] is the clause variable for clause expressions, or the
   * `def` arguments for helper bodies.
   */
  valueWithFrame(e: Expr): (frame: number[], p: Float64Array) => number {
    switch (e.kind) {
      case "number": {
        const v = e.value;
        return () => v;
      }
      case "paren":
        return this.valueWithFrame(e.inner);
      case "name": {
        const s = this.scope;
        if (s.locals?.has(e.name)) {
          const i = s.locals.get(e.name)!;
          return (frame) => frame[i]!;
        }
        if (s.variable !== null && e.name === s.variable) return (frame) => frame[0]!;
        const slot = s.paramSlots.get(e.name);
        if (slot !== undefined) return (_f, p) => p[slot]!;
        const c = CONSTANTS.get(e.name);
        if (c) {
          const v = c.value;
          return () => v;
        }
        throw new CompileError(`unresolved name ${e.name}`);
      }
      case "unary": {
        if (e.op === "not") throw new CompileError("condition used as a value");
        const a = this.valueWithFrame(e.operand);
        return e.op === "-" ? (f, p) => -a(f, p) : a;
      }
      case "binary": {
        const l = this.valueWithFrame(e.left);
        const r = this.valueWithFrame(e.right);
        switch (e.op) {
          case "+": return (f, p) => l(f, p) + r(f, p);
          case "-": return (f, p) => l(f, p) - r(f, p);
          case "*": return (f, p) => l(f, p) * r(f, p);
          case "/": return (f, p) => l(f, p) / r(f, p);
          case "^": return (f, p) => Math.pow(l(f, p), r(f, p));
          default: throw new CompileError("condition used as a value");
        }
      }
      case "if": {
        const c = this.condWithFrame(e.cond);
        const t = this.valueWithFrame(e.then);
        const o = this.valueWithFrame(e.else);
        return (f, p) => (c(f, p) ? t(f, p) : o(f, p));
      }
      case "call": {
        const args = e.args.map((a) => this.valueWithFrame(a));
        const def = this.scope.defs.get(e.callee);
        if (def) {
          return (f, p) => def(args.map((a) => a(f, p)), p);
        }
        const b = BUILTINS.get(e.callee);
        if (!b || b.arity !== args.length) throw new CompileError(`unresolved call ${e.callee}`);
        const fn = b.fn;
        if (args.length === 1) {
          const a0 = args[0]!;
          return (f, p) => fn(a0(f, p));
        }
        const a0 = args[0]!;
        const a1 = args[1]!;
        return (f, p) => fn(a0(f, p), a1(f, p));
      }
      case "error":
        throw new CompileError("expression has a syntax error");
    }
  }

  private condWithFrame(e: Expr): (frame: number[], p: Float64Array) => boolean {
    switch (e.kind) {
      case "paren":
        return this.condWithFrame(e.inner);
      case "unary": {
        if (e.op !== "not") break;
        const a = this.condWithFrame(e.operand);
        return (f, p) => !a(f, p);
      }
      case "binary": {
        if (e.op === "and" || e.op === "or") {
          const l = this.condWithFrame(e.left);
          const r = this.condWithFrame(e.right);
          return e.op === "and" ? (f, p) => l(f, p) && r(f, p) : (f, p) => l(f, p) || r(f, p);
        }
        const l = this.valueWithFrame(e.left);
        const r = this.valueWithFrame(e.right);
        switch (e.op) {
          case "<": return (f, p) => l(f, p) < r(f, p);
          case "<=": return (f, p) => l(f, p) <= r(f, p);
          case ">": return (f, p) => l(f, p) > r(f, p);
          case ">=": return (f, p) => l(f, p) >= r(f, p);
          default: break;
        }
        break;
      }
      default:
        break;
    }
    throw new CompileError("value used as a condition");
  }
}

/** True when the expression is a condition (comparison or logical), not a number. */
export function isCondition(e: Expr): boolean {
  while (e.kind === "paren") e = e.inner;
  if (e.kind === "unary") return e.op === "not";
  if (e.kind === "binary") return ["<", "<=", ">", ">=", "and", "or"].includes(e.op);
  return false;
}

/** Evaluates an expression that uses only numbers, constants and built-ins; null when it is not constant or not finite-compilable. */
export function evalConstant(e: Expr): number | null {
  try {
    const f = compileExpr(e, { variable: null, paramSlots: new Map(), defs: new Map() });
    return f(NaN, new Float64Array(0));
  } catch {
    return null;
  }
}
