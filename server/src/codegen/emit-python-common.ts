/**
 * What the three Python emitters (PyTorch, JAX, NumPy) share: the Python dialect of the expression printer
 * (`print.ts`) over a per-library part (function names, elementwise `where`, min/max), number literals,
 * comment blocks and the module skeleton. Pure: model in, text out.
 */
import type { Expr } from "../syntax/ast.js";
import { CLAMP_EPS as CLAMP_EPS_VALUE, lossHeaderLines as lossHeaderLinesFor, type LoweredLoss } from "./model.js";
import { PREC, printExpr, type Dialect, type Spelling } from "./print.js";

/** The per-library part of a Python dialect (`torch`, `jnp`, `np`). */
export interface PyLibrary {
  /** Library prefix for the common elementwise functions and the logical functions. */
  lib: string;
  /** Special spellings by notation name (they take precedence over `<lib>.<name>`), `min` and `max` among them. */
  calls: Record<string, Spelling>;
  /** Elementwise select; `variable` is the array in scope (for broadcasting constant branches). */
  where(cond: string, a: string, b: string, rawA: Expr, rawB: Expr, variable: string): string;
}

/** A Python dialect of the printer, with the library prefix the module skeleton needs. */
export type PyDialect = Dialect & { lib: string };

/** A Python float literal that round-trips (shortest repr, as JavaScript's String gives). */
export function pyNumber(v: number): string {
  if (Number.isNaN(v)) return 'float("nan")';
  if (v === Infinity) return 'float("inf")';
  if (v === -Infinity) return '-float("inf")';
  return String(v);
}

/** Elementwise functions every array library spells `<lib>.<name>`, by notation name. */
const SIMPLE: Record<string, string> = {
  ln: "log", log: "log", log2: "log2", log10: "log10", exp: "exp", sqrt: "sqrt", abs: "abs", sin: "sin", cos: "cos",
  tan: "tan", sinh: "sinh", cosh: "cosh", tanh: "tanh", log1p: "log1p", expm1: "expm1",
};

/**
 * log Φ (the log-CDF pass of rewrite.ts) where the library has it: torch.special.log_ndtr and
 * jax.scipy.special.log_ndtr follow the asymptotic tail (Abramowitz & Stegun 1964, 26.2.12); NumPy has
 * none, so its emitter supplies a helper.
 */
const LOG_NDTR: Record<string, Record<string, Spelling>> = {
  torch: { lognormcdf: "torch.special.log_ndtr" },
  jnp: { lognormcdf: { print: ([a]) => `jax.scipy.special.log_ndtr(${a})`, helpers: ["jax.scipy.special"] } },
};

/** The printer's dialect for one array library: `**`, elementwise logical functions and select, `<lib>.<name>` calls. */
export function pythonDialect(l: PyLibrary): PyDialect {
  return {
    name: l.lib,
    lib: l.lib,
    number: pyNumber,
    power: { infix: "**" },
    logic: { kind: "function", and: `${l.lib}.logical_and`, or: `${l.lib}.logical_or`, not: `${l.lib}.logical_not` },
    conditional: l.where,
    prefixOperand: PREC.unary,
    calls: { ...Object.fromEntries(Object.entries(SIMPLE).map(([k, v]) => [k, `${l.lib}.${v}`])), ...LOG_NDTR[l.lib], ...l.calls },
  };
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
    ...(clamped
      ? [
          "",
          "    The clamp is flat outside the EPS bounds: where pred lies outside them (q = 0 or 1 exactly included)",
          "    the gradient is exactly 0, so a prediction stuck at 0 or 1 gets no signal. Feed probabilities from a",
          "    sigmoid (strictly inside (0, 1)), or generate with --input score.",
        ]
      : []),
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
  /** Module-level definitions every module of the target needs (printed after EPS, before the helpers). */
  preamble?: string[];
  /** The loss functions' parameter list (default `pred, target, weight=None, reduction="mean"`), e.g. with annotations. */
  signature?: string;
  /** The module's `_reduce` source (default REDUCE). */
  reduce?: string[];
  /** Print the clamping bounds as number literals instead of the module constant EPS (TorchScript cannot read module-level floats). */
  literalEps?: boolean;
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
    // The file's own recovery `def` (from the quick fix) keeps its name.
    const own = l.recover?.userDef ? sanitise(l.recover.userDef) : null;
    const make = (base: string) => ({ fn: base, grad: `${base}_grad`, recover: own && own !== base && own !== `${base}_grad` && !used.has(own) ? own : `${base}_recover_posterior` });
    // All three names must be free: a loss `a_grad` before a loss `a` must not give `a` the gradient's name.
    const free = (n: { fn: string; grad: string; recover: string }) => !used.has(n.fn) && !used.has(n.grad) && !used.has(n.recover);
    let names = make(sanitise(l.name));
    for (let k = 2; !free(names); k++) names = make(`${sanitise(l.name)}_${k}`);
    used.add(names.fn).add(names.grad).add(names.recover);
    return names;
  });
}

/** Renders a whole Python module for one target. */
export function emitPythonModule(input: EmitInput, t: PyTarget, sanitise: (n: string) => string): string {
  const names = pythonNames(input.losses, sanitise);
  const used = new Set<string>();
  const bodies: string[][] = [];
  const eps = t.literalEps ? pyNumber(CLAMP_EPS_VALUE) : "EPS";
  const clampBound = (b: number | null, which: "lo" | "hi"): string | null => (b === null ? null : which === "lo" ? eps : `1.0 - ${eps}`);
  input.losses.forEach((loss, i) => {
    const n = names[i]!;
    const v = loss.variable;
    const out: string[] = [];
    const header = lossHeaderLinesFor(loss, input.source, n.fn, loss.recover ? n.recover : null);
    out.push(...pyComment(header));
    out.push(`def ${n.fn}(${t.signature ?? 'pred, target, weight=None, reduction="mean"'}):`);
    out.push(...lossDocstring(loss, loss.clamp !== null));
    const arr = t.asArray("pred");
    out.push(`    ${v} = ${loss.clamp ? t.clamp(arr, clampBound(loss.clamp.lo, "lo"), clampBound(loss.clamp.hi, "hi")) : arr}`);
    out.push(`    y = ${t.labels("target", v)}`);
    const pos = printExpr(loss.pos, t.dialect, used, v);
    const neg = printExpr(loss.neg, t.dialect, used, v);
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
      const dpos = printExpr(loss.dpos, t.dialect, used, v);
      const dneg = printExpr(loss.dneg, t.dialect, used, v);
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
      out.push(`    return ${printExpr(loss.recover.expr, t.dialect, used, "q")}`);
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
    lines.push(...pyComment([
      `Clamping bound for probabilities where a singularity remains, for float32 and float64 input alike: 1e-7 is`,
      "above float32's machine epsilon 1.19e-7 / 2, so 1 - EPS rounds below 1 in float32 (0.99999988) and in float64,",
      "and the logarithms stay finite in both dtypes (float64 alone could go down to about 1e-15).",
    ]));
    lines.push(`EPS = ${pyNumber(CLAMP_EPS_VALUE)}`, "");
  }
  if (t.preamble) lines.push("", ...t.preamble, "");
  for (const h of Object.keys(t.helperSources)) if (used.has(h)) lines.push("", ...t.helperSources[h]!, "");
  lines.push("", ...(t.reduce ?? REDUCE), "");
  if (t.gradients) lines.push("", ...REDUCE_GRAD, "");
  for (const b of bodies) lines.push("", ...b, "");
  // One trailing newline, no blank-line runs longer than two (PEP 8).
  return lines.join("\n").replace(/\n{4,}/g, "\n\n\n").replace(/^\n+/, "").trimEnd() + "\n";
}
