/**
 * What the three Python emitters (PyTorch, JAX, NumPy) share: an expression printer over a per-library
 * dialect (function names, elementwise `where`, min/max, logical operators), number literals, comment
 * blocks and the module skeleton. Pure: model in, text out.
 */
import type { Expr } from "../syntax/ast.js";
import { CLAMP_EPS as CLAMP_EPS_VALUE, lossHeaderLines as lossHeaderLinesFor, type LoweredLoss } from "./model.js";

export interface PyDialect {
  /** Library prefix for the common elementwise functions (`torch`, `jnp`, `np`). */
  lib: string;
  /** Special call spellings, by notation name; `args` are printed arguments; `helper` names a module-level helper it needs. */
  calls: Record<string, { print: (args: string[], raw: Expr[]) => string; helper?: string }>;
  /** Elementwise select; `variable` is the array in scope (for broadcasting constant branches). */
  where(cond: string, a: string, b: string, rawA: Expr, rawB: Expr, variable: string): string;
  minimum(a: string, b: string, rawA: Expr, rawB: Expr): string;
  maximum(a: string, b: string, rawA: Expr, rawB: Expr): string;
}

/** Python precedence levels used by the printer (higher binds tighter). */
const LEVEL = { or: 1, and: 2, not: 3, cmp: 4, add: 5, mul: 6, unary: 7, pow: 8, atom: 9 } as const;

/** A Python float literal that round-trips (shortest repr, as JavaScript's String gives). */
export function pyNumber(v: number): string {
  if (Number.isNaN(v)) return 'float("nan")';
  if (v === Infinity) return 'float("inf")';
  if (v === -Infinity) return '-float("inf")';
  return String(v);
}

const SIMPLE: Record<string, string> = {
  ln: "log", log: "log", log2: "log2", log10: "log10", exp: "exp", sqrt: "sqrt", abs: "abs", sin: "sin", cos: "cos",
  tan: "tan", sinh: "sinh", cosh: "cosh", tanh: "tanh", log1p: "log1p", expm1: "expm1",
};

/** Prints an expression as Python over the dialect; records the helpers it needs in `used`. */
export function printPython(e: Expr, d: PyDialect, variable: string, used: Set<string>): string {
  const p = (x: Expr, ctx: number): string => {
    const [s, level] = go(x);
    return level < ctx ? `(${s})` : s;
  };
  const go = (x: Expr): [string, number] => {
    switch (x.kind) {
      case "number":
        return [pyNumber(x.value), x.value < 0 || Object.is(x.value, -0) ? LEVEL.unary : LEVEL.atom];
      case "name":
        return [x.name, LEVEL.atom];
      case "paren":
        return go(x.inner);
      case "unary":
        if (x.op === "not") return [`${d.lib}.logical_not(${p(x.operand, 0)})`, LEVEL.atom];
        return [`${x.op}${p(x.operand, LEVEL.unary)}`, LEVEL.unary];
      case "binary": {
        switch (x.op) {
          case "and":
          case "or":
            return [`${d.lib}.logical_${x.op}(${p(x.left, 0)}, ${p(x.right, 0)})`, LEVEL.atom];
          case "<":
          case "<=":
          case ">":
          case ">=":
            return [`${p(x.left, LEVEL.cmp + 1)} ${x.op} ${p(x.right, LEVEL.cmp + 1)}`, LEVEL.cmp];
          case "+":
          case "-":
            return [`${p(x.left, LEVEL.add)} ${x.op} ${p(x.right, LEVEL.add + 1)}`, LEVEL.add];
          case "*":
          case "/":
            return [`${p(x.left, LEVEL.mul)} ${x.op} ${p(x.right, LEVEL.mul + 1)}`, LEVEL.mul];
          case "^":
            // Python's ** is right-associative and binds tighter than a unary minus on its left only.
            return [`${p(x.left, LEVEL.atom)} ** ${p(x.right, LEVEL.unary)}`, LEVEL.pow];
        }
        break;
      }
      case "if":
        return [d.where(p(x.cond, 0), p(x.then, 0), p(x.else, 0), x.then, x.else, variable), LEVEL.atom];
      case "call": {
        const args = x.args.map((a) => p(a, 0));
        const special = d.calls[x.callee];
        if (special) {
          if (special.helper) used.add(special.helper);
          return [special.print(args, x.args), LEVEL.atom];
        }
        if (x.callee === "min") return [d.minimum(args[0]!, args[1]!, x.args[0]!, x.args[1]!), LEVEL.atom];
        if (x.callee === "max") return [d.maximum(args[0]!, args[1]!, x.args[0]!, x.args[1]!), LEVEL.atom];
        if (x.callee === "pow") return [`${p(x.args[0]!, LEVEL.atom)} ** ${p(x.args[1]!, LEVEL.unary)}`, LEVEL.pow];
        if (x.callee === "logit") {
          // logit(u) = ln(u) − ln(1 − u), the second term through log1p for accuracy near u = 0.
          return [`${d.lib}.log(${args[0]}) - ${d.lib}.log1p(-${p(x.args[0]!, LEVEL.unary)})`, LEVEL.add];
        }
        const simple = SIMPLE[x.callee];
        if (simple) return [`${d.lib}.${simple}(${args.join(", ")})`, LEVEL.atom];
        throw new Error(`no ${d.lib} spelling for \`${x.callee}\``);
      }
      case "error":
        throw new Error("cannot print an expression with a syntax error");
    }
    throw new Error("unreachable");
  };
  return p(e, 0);
}

/** Prints an expression so it can stand as a factor of a product (parenthesised unless atomic). */
export function asFactor(s: string): string {
  return /^[A-Za-z_][A-Za-z0-9_.]*(\(.*\))?$/.test(s) && balanced(s) ? s : `(${s})`;
}

/** True when the parentheses of s close only at its very end (so `f(a) + g(b)` is not an atom). */
function balanced(s: string): boolean {
  let depth = 0;
  for (let i = 0; i < s.length; i++) {
    if (s[i] === "(") depth++;
    else if (s[i] === ")") {
      depth--;
      if (depth === 0 && i !== s.length - 1) return false;
    }
  }
  return depth === 0;
}

/** `# `-prefixed comment lines. */
export function pyComment(lines: string[]): string[] {
  return lines.map((l) => (l === "" ? "#" : `# ${l}`));
}

/** A Python string literal (double-quoted, escaped) for docstrings and messages. */
export function pyString(s: string): string {
  return JSON.stringify(s);
}

/** The docstring lines shared by every Python loss function. */
export function lossDocstring(loss: LoweredLoss, clamped: boolean): string[] {
  const v = loss.variable;
  return [
    `    """Loss \`${loss.name}\`: per-sample y * l1(${v}) + (1 - y) * l0(${v}), optionally weighted, then reduced.`,
    "",
    `    pred: ${loss.input === "prob" ? `probabilities q in [0, 1]${clamped ? " (clamped to the EPS bounds)" : ""}` : "scores v"};`,
    "    target: labels y in {0, 1} (values in between give the expected loss under P(y = 1) = target);",
    "    weight: optional per-sample weights, multiplied in before the reduction;",
    '    reduction: "mean" (mean over samples of the weighted losses), "sum" or "none" (per-sample values).',
    '    """',
  ];
}

/** Comment lines for the module header. */
export function moduleHeader(target: string, source: string, input: string, extra: string[]): string[] {
  return pyComment([
    `Generated by \`propriety gen --target ${target}\` from ${source}; input scale: ${input}.`,
    "Do not edit by hand: change the .loss file and regenerate.",
    "Labels are y in {0, 1}; each function returns the reduced loss (or per-sample values with reduction=\"none\").",
    ...extra,
  ]);
}

/** What an emitter receives: the lowered losses of one file and the ones that could not be generated. */
export interface EmitInput {
  /** The source file name shown in headers. */
  source: string;
  input: "prob" | "score";
  losses: LoweredLoss[];
  skipped: { name: string; reason: string }[];
}

/** The per-library parts of a Python module. */
export interface PyTarget {
  target: "torch" | "jax" | "numpy";
  dialect: PyDialect;
  imports: string[];
  /** Extra module-header lines (e.g. how to jit). */
  notes: string[];
  /** Converts `pred` to the library's array type. */
  asArray(pred: string): string;
  /** Converts `target` to an array like the prediction array `like`. */
  labels(target: string, like: string): string;
  /** Clamps an array to [lo, hi] (either side may be absent). */
  clamp(x: string, lo: string | null, hi: string | null): string;
  /** Source of the module-level helpers, by helper name. */
  helperSources: Record<string, string[]>;
  /** Extra imports a helper needs (added only when the helper is used). */
  helperImports?: Record<string, string[]>;
  /** Emit `<name>_grad` functions (closed-form gradients in pred). */
  gradients: boolean;
}

const REDUCE = [
  "def _reduce(loss, weight, reduction):",
  '    """Multiplies in the sample weights, then reduces: "mean", "sum" or "none"."""',
  "    if weight is not None:",
  "        loss = loss * weight",
  '    if reduction == "mean":',
  "        return loss.mean()",
  '    if reduction == "sum":',
  "        return loss.sum()",
  '    if reduction == "none":',
  "        return loss",
  '    raise ValueError(f"reduction must be \\"mean\\", \\"sum\\" or \\"none\\", not {reduction!r}")',
];

const REDUCE_GRAD = [
  "def _reduce_grad(grad, weight, reduction):",
  '    """Scales per-sample gradients like _reduce scales the losses: weights in, 1/N for "mean"."""',
  "    if weight is not None:",
  "        grad = grad * weight",
  '    if reduction == "mean":',
  "        return grad / grad.size",
  '    if reduction in ("sum", "none"):',
  "        return grad",
  '    raise ValueError(f"reduction must be \\"mean\\", \\"sum\\" or \\"none\\", not {reduction!r}")',
];

/** Python names for each loss: function, gradient and recovery map (unique within the module). */
export function pythonNames(losses: LoweredLoss[], sanitise: (n: string) => string): { fn: string; grad: string; recover: string }[] {
  const used = new Set<string>();
  return losses.map((l) => {
    let base = sanitise(l.name);
    for (let k = 2; used.has(base); k++) base = `${sanitise(l.name)}_${k}`;
    const names = { fn: base, grad: `${base}_grad`, recover: `${base}_recover_posterior` };
    used.add(names.fn).add(names.grad).add(names.recover);
    return names;
  });
}

/** Renders a whole Python module for one target. */
export function emitPythonModule(input: EmitInput, t: PyTarget, sanitise: (n: string) => string): string {
  const names = pythonNames(input.losses, sanitise);
  const used = new Set<string>();
  const bodies: string[][] = [];
  const clampBound = (b: number | null, which: "lo" | "hi"): string | null => (b === null ? null : which === "lo" ? "EPS" : "1.0 - EPS");
  input.losses.forEach((loss, i) => {
    const n = names[i]!;
    const v = loss.variable;
    const out: string[] = [];
    const header = lossHeaderLinesFor(loss, input.source, n.fn, loss.recover ? n.recover : null);
    out.push(...pyComment(header));
    out.push(`def ${n.fn}(pred, target, weight=None, reduction="mean"):`);
    out.push(...lossDocstring(loss, loss.clamp !== null));
    const arr = t.asArray("pred");
    out.push(`    ${v} = ${loss.clamp ? t.clamp(arr, clampBound(loss.clamp.lo, "lo"), clampBound(loss.clamp.hi, "hi")) : arr}`);
    out.push(`    y = ${t.labels("target", v)}`);
    const pos = printPython(loss.pos, t.dialect, v, used);
    const neg = printPython(loss.neg, t.dialect, v, used);
    out.push(`    loss = y * ${asFactor(pos)} + (1 - y) * ${asFactor(neg)}`);
    out.push("    return _reduce(loss, weight, reduction)");
    if (t.gradients) {
      out.push("", "");
      out.push(`def ${n.grad}(pred, target, weight=None, reduction="mean"):`);
      out.push(`    """Gradient of ${n.fn} with respect to pred, in closed form (same arguments; same shape as pred).`);
      out.push("");
      out.push('    Per-sample derivatives, times the weights, divided by the number of samples for "mean";');
      out.push(loss.clamp ? "    zero where pred lies outside the clamping bounds (the clamp is flat there)." : "    no clamping is applied.");
      out.push('    """');
      out.push(`    raw = ${t.asArray("pred")}`);
      out.push(`    ${v} = ${loss.clamp ? t.clamp("raw", clampBound(loss.clamp.lo, "lo"), clampBound(loss.clamp.hi, "hi")) : "raw"}`);
      out.push(`    y = ${t.labels("target", v)}`);
      const dpos = printPython(loss.dpos, t.dialect, v, used);
      const dneg = printPython(loss.dneg, t.dialect, v, used);
      out.push(`    grad = y * ${asFactor(dpos)} + (1 - y) * ${asFactor(dneg)}`);
      if (loss.clamp) out.push(`    grad = ${t.dialect.lib}.where(raw == ${v}, grad, 0.0)`);
      out.push("    return _reduce_grad(grad, weight, reduction)");
    }
    if (loss.recover) {
      out.push("", "");
      out.push(`def ${n.recover}(q):`);
      out.push(`    """Posterior estimate eta = l0'(q) / (l0'(q) - l1'(q)) from a prediction q of the improper loss ${n.fn}.`);
      out.push("");
      out.push("    Reid & Williamson 2010, \"Composite Binary Losses\", JMLR 11, Cor. 12: at the risk minimiser q*(eta),");
      out.push("    eta * l1'(q*) + (1 - eta) * l0'(q*) = 0. Valid where q*(eta) is monotone.");
      out.push('    """');
      const arr2 = t.asArray("q");
      const rc = loss.recover.clamp;
      out.push(`    q = ${rc ? t.clamp(arr2, clampBound(rc.lo, "lo"), clampBound(rc.hi, "hi")) : arr2}`);
      out.push(`    return ${printPython(loss.recover.expr, t.dialect, "q", used)}`);
    }
    bodies.push(out);
  });
  const needsEps = input.losses.some((l) => l.clamp !== null || (l.recover?.clamp ?? null) !== null);
  const lines: string[] = [];
  lines.push(...moduleHeader(t.target, input.source, input.input === "prob" ? "probabilities" : "scores", [
    ...t.notes,
    ...input.skipped.map((s) => `not generated: \`${s.name}\`: ${s.reason}`),
  ]));
  const extra = new Set<string>();
  for (const h of used) for (const imp of t.helperImports?.[h] ?? []) extra.add(imp);
  const stdlib = [...extra].filter((i) => /^import (math|statistics)$/.test(i)).sort();
  const library = [...extra].filter((i) => !stdlib.includes(i)).sort();
  // Standard-library imports first, then the array library (PEP 8 grouping).
  lines.push(...stdlib, ...(stdlib.length > 0 ? [""] : []), ...t.imports, ...library, "");
  if (needsEps) {
    lines.push(...pyComment([`Clamping bound for probabilities where a singularity remains: 1e-7 suits float32 (machine epsilon 1.19e-7),`, "so 1 - EPS is still below 1 and the logarithms stay finite."]));
    lines.push(`EPS = ${pyNumber(CLAMP_EPS_VALUE)}`, "");
  }
  for (const h of Object.keys(t.helperSources)) if (used.has(h)) lines.push("", ...t.helperSources[h]!, "");
  lines.push("", ...REDUCE, "");
  if (t.gradients) lines.push("", ...REDUCE_GRAD, "");
  for (const b of bodies) lines.push("", ...b, "");
  // One trailing newline, no blank-line runs longer than two (PEP 8).
  return lines.join("\n").replace(/\n{4,}/g, "\n\n\n").replace(/^\n+/, "").trimEnd() + "\n";
}
