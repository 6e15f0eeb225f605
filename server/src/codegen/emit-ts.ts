/**
 * TypeScript emitter: strict-mode typed functions over `ArrayLike<number>` (plain arrays or
 * `Float64Array`), with the same options as the Python targets (`weight`, `reduction`), stable scalar
 * helpers (softplus, sigmoid), a closed-form gradient `<name>Grad` and, for improper losses, the
 * posterior-recovery map `<name>RecoverPosterior`.
 */
import type { Expr } from "../syntax/ast.js";
import type { EmitInput } from "./emit-python-common.js";
import { CLAMP_EPS, lossHeaderLines, type LoweredLoss } from "./model.js";
import { tsFunctionName } from "./names.js";
import { helperCall, PREC, printExpr, type Dialect } from "./print.js";

/** Functions of `Math`, by notation name. */
const MATH: Record<string, string> = {
  ln: "log", log: "log", log2: "log2", log10: "log10", exp: "exp", sqrt: "sqrt", abs: "abs", sin: "sin", cos: "cos",
  tan: "tan", asin: "asin", acos: "acos", atan: "atan", sinh: "sinh", cosh: "cosh", tanh: "tanh", log1p: "log1p",
  expm1: "expm1", min: "min", max: "max",
};

/** A TypeScript number literal that round-trips. */
export function tsNumber(v: number): string {
  if (Number.isNaN(v)) return "NaN";
  if (v === Infinity) return "Infinity";
  if (v === -Infinity) return "-Infinity";
  return String(v);
}

/** The printer's TypeScript dialect: scalars, `Math.pow`, `&&`/`||`/`!`, the ternary, `Math.*` and the module's helpers. */
export const TS_DIALECT: Dialect = {
  name: "TypeScript",
  number: tsNumber,
  power: { fn: "Math.pow" },
  logic: { kind: "operator", and: "&&", or: "||", not: "!" },
  conditional: "ternary",
  // An operand that itself starts with a sign is parenthesised, so `- -x` never prints as `--x`.
  prefixOperand: PREC.pow,
  calls: {
    ...Object.fromEntries(Object.entries(MATH).map(([k, v]) => [k, `Math.${v}`])),
    softplus: helperCall("softplus", ["softplus"]),
    sigmoid: helperCall("sigmoid", ["sigmoid"]),
    // erf and erfc call each other; normcdf uses both; probit refines through normcdf.
    erf: helperCall("erf", ["erf", "erfc"]),
    normcdf: helperCall("normcdf", ["normcdf", "erf", "erfc"]),
    probit: helperCall("probit", ["probit", "erf", "erfc", "normcdf"]),
    lognormcdf: helperCall("lognormcdf", ["lognormcdf", "logErfc", "erf", "erfc"]),
  },
};

/** Prints an expression as TypeScript over scalars; records the helpers it needs in `used`. */
export function printTs(e: Expr, used: Set<string>): string {
  return printExpr(e, TS_DIALECT, used);
}

const HELPERS: Record<string, string[]> = {
  softplus: [
    "/** ln(1 + e^x) without overflow: x + ln(1 + e^(-x)) for positive x. */",
    "function softplus(x: number): number {",
    "  return x > 0 ? x + Math.log1p(Math.exp(-x)) : Math.log1p(Math.exp(x));",
    "}",
  ],
  sigmoid: [
    "/** The logistic function 1/(1 + e^(-x)), evaluated on the side that cannot overflow. */",
    "function sigmoid(x: number): number {",
    "  if (x >= 0) return 1 / (1 + Math.exp(-x));",
    "  const z = Math.exp(x);",
    "  return z / (1 + z);",
    "}",
  ],
  erfc: [
    "/** Complementary error function: Lentz's continued fraction for x >= 0.5, erf's series below. */",
    "function erfc(x: number): number {",
    "  if (x < 0.5) return 1 - erf(x);",
    "  if (x > 27) return 0;",
    "  const tiny = 1e-300;",
    "  let f = x;",
    "  let c = x;",
    "  let d = 0;",
    "  for (let n = 1; n < 500; n++) {",
    "    const a = n / 2;",
    "    d = x + a * d;",
    "    d = Math.abs(d) < tiny ? tiny : d;",
    "    c = x + a / c;",
    "    c = Math.abs(c) < tiny ? tiny : c;",
    "    d = 1 / d;",
    "    const delta = c * d;",
    "    f *= delta;",
    "    if (Math.abs(delta - 1) < 1e-16) break;",
    "  }",
    "  return Math.exp(-x * x) / Math.sqrt(Math.PI) / f;",
    "}",
  ],
  erf: [
    "/** Error function: Taylor series for |x| < 0.5, the continued fraction of erfc beyond. */",
    "function erf(x: number): number {",
    "  if (Number.isNaN(x)) return NaN;",
    "  if (Math.abs(x) < 0.5) {",
    "    let term = x;",
    "    let sum = x;",
    "    for (let n = 1; n < 30; n++) {",
    "      term *= (-x * x) / n;",
    "      const add = term / (2 * n + 1);",
    "      sum += add;",
    "      if (Math.abs(add) < 1e-17 * Math.abs(sum)) break;",
    "    }",
    "    return (2 / Math.sqrt(Math.PI)) * sum;",
    "  }",
    "  const r = erfc(Math.abs(x));",
    "  return x > 0 ? 1 - r : r - 1;",
    "}",
  ],
  normcdf: [
    "/** Standard normal CDF, erfc(-x/sqrt(2))/2 (accurate in both tails). */",
    "function normcdf(x: number): number {",
    "  const t = -x / Math.SQRT2;",
    "  return t >= 0.5 ? 0.5 * erfc(t) : 0.5 * (1 - erf(t));",
    "}",
  ],
  logErfc: [
    "/** ln erfc(x) for x >= 0.5 without underflow: -x^2 - ln(sqrt(pi)) - ln(f), f the continued fraction of erfc (A&S 1964, 7.1.14). */",
    "function logErfc(x: number): number {",
    "  const tiny = 1e-300;",
    "  let f = x;",
    "  let c = x;",
    "  let d = 0;",
    "  for (let n = 1; n < 500; n++) {",
    "    const a = n / 2;",
    "    d = x + a * d;",
    "    d = Math.abs(d) < tiny ? tiny : d;",
    "    c = x + a / c;",
    "    c = Math.abs(c) < tiny ? tiny : c;",
    "    d = 1 / d;",
    "    const delta = c * d;",
    "    f *= delta;",
    "    if (Math.abs(delta - 1) < 1e-16) break;",
    "  }",
    "  return -x * x - 0.5 * Math.log(Math.PI) - Math.log(f);",
    "}",
  ],
  lognormcdf: [
    "/** ln Phi(x) without underflow: ln(erfc(t)/2) with t = -x/sqrt(2) through logErfc in the lower tail (A&S 1964, 26.2.29), log1p(-Phi(-x)) above. */",
    "function lognormcdf(x: number): number {",
    "  const t = -x / Math.SQRT2;",
    "  if (t >= 0.5) return logErfc(t) - Math.LN2;",
    "  const u = x / Math.SQRT2;",
    "  return Math.log1p(-0.5 * (u >= 0.5 ? erfc(u) : 1 - erf(u)));",
    "}",
  ],
  probit: [
    "/** Inverse normal CDF: Acklam's rational approximation refined by one Halley step. */",
    "function probit(p: number): number {",
    "  if (Number.isNaN(p) || p < 0 || p > 1) return NaN;",
    "  if (p === 0) return -Infinity;",
    "  if (p === 1) return Infinity;",
    "  const a = [-3.969683028665376e1, 2.209460984245205e2, -2.759285104469687e2, 1.38357751867269e2, -3.066479806614716e1, 2.506628277459239];",
    "  const b = [-5.447609879822406e1, 1.615858368580409e2, -1.556989798598866e2, 6.680131188771972e1, -1.328068155288572e1];",
    "  const c = [-7.784894002430293e-3, -3.223964580411365e-1, -2.400758277161838, -2.549732539343734, 4.374664141464968, 2.938163982698783];",
    "  const d = [7.784695709041462e-3, 3.224671290700398e-1, 2.445134137142996, 3.754408661907416];",
    "  const tail = (u: number) => (((((c[0]! * u + c[1]!) * u + c[2]!) * u + c[3]!) * u + c[4]!) * u + c[5]!) / ((((d[0]! * u + d[1]!) * u + d[2]!) * u + d[3]!) * u + 1);",
    "  let x: number;",
    "  if (p < 0.02425) x = tail(Math.sqrt(-2 * Math.log(p)));",
    "  else if (p > 1 - 0.02425) x = -tail(Math.sqrt(-2 * Math.log(1 - p)));",
    "  else {",
    "    const u = p - 0.5;",
    "    const r = u * u;",
    "    x = ((((((a[0]! * r + a[1]!) * r + a[2]!) * r + a[3]!) * r + a[4]!) * r + a[5]!) * u) / (((((b[0]! * r + b[1]!) * r + b[2]!) * r + b[3]!) * r + b[4]!) * r + 1);",
    "  }",
    "  const e = normcdf(x) - p;",
    "  const h = e * Math.sqrt(2 * Math.PI) * Math.exp((x * x) / 2);",
    "  return x - h / (1 + (x * h) / 2);",
    "}",
  ],
};

const HELPER_ORDER = ["softplus", "sigmoid", "erfc", "erf", "normcdf", "probit", "logErfc", "lognormcdf"];

const PRELUDE = [
  "/** How per-sample values are combined: the mean (default), the sum, or none (per-sample values). */",
  'export type Reduction = "mean" | "sum" | "none";',
  "",
  "/** Options shared by every generated loss. */",
  "export interface LossOptions {",
  "  /** Per-sample weights, multiplied in before the reduction. */",
  "  weight?: ArrayLike<number>;",
  '  /** "mean" (of the weighted per-sample losses; the default), "sum" or "none". */',
  "  reduction?: Reduction;",
  "}",
  "",
  "/** The common length of pred, target and weight; throws when they differ. */",
  "function checkLengths(pred: ArrayLike<number>, target: ArrayLike<number>, weight: ArrayLike<number> | undefined): number {",
  "  if (target.length !== pred.length || (weight !== undefined && weight.length !== pred.length)) {",
  '    throw new RangeError("pred, target and weight must have the same length");',
  "  }",
  "  return pred.length;",
  "}",
  "",
  "/** Multiplies in the weights, then reduces per-sample values. */",
  "function reduce(values: Float64Array, options: LossOptions): number | Float64Array {",
  "  const w = options.weight;",
  "  if (w !== undefined) for (let i = 0; i < values.length; i++) values[i] = values[i]! * w[i]!;",
  '  const r = options.reduction ?? "mean";',
  '  if (r === "none") return values;',
  "  let s = 0;",
  "  for (let i = 0; i < values.length; i++) s += values[i]!;",
  '  if (r === "sum") return s;',
  '  if (r === "mean") return s / values.length;',
  "  throw new RangeError(`reduction must be \"mean\", \"sum\" or \"none\", not ${String(r)}`);",
  "}",
  "",
  "/** Scales per-sample gradients like reduce() scales the losses: weights in, 1/N for \"mean\". */",
  "function scaleGrad(grad: Float64Array, options: LossOptions): Float64Array {",
  "  const w = options.weight;",
  '  const r = options.reduction ?? "mean";',
  '  if (r !== "mean" && r !== "sum" && r !== "none") throw new RangeError(`reduction must be "mean", "sum" or "none", not ${String(r)}`);',
  '  const scale = r === "mean" ? 1 / grad.length : 1;',
  "  for (let i = 0; i < grad.length; i++) grad[i] = grad[i]! * (w !== undefined ? w[i]! : 1) * scale;",
  "  return grad;",
  "}",
];

function clampTs(v: string, raw: string, clamp: LoweredLoss["clamp"]): string {
  if (!clamp) return raw;
  if (clamp.lo !== null && clamp.hi !== null) return `Math.min(Math.max(${raw}, EPS), 1 - EPS)`;
  if (clamp.lo !== null) return `Math.max(${raw}, EPS)`;
  void v;
  return `Math.min(${raw}, 1 - EPS)`;
}

const paren = (s: string): string => (/^[A-Za-z_][A-Za-z0-9_.]*(\([^()]*\))?$/.test(s) ? s : `(${s})`);

/** The TypeScript module text for the lowered losses of one file. */
export function emitTs(input: EmitInput): string {
  const used = new Set<string>();
  const taken = new Set<string>();
  const bodies: string[][] = [];
  for (const loss of input.losses) {
    // All three names must be free: a loss `aGrad` before a loss `a` must not give `a` the gradient's name.
    let fn = tsFunctionName(loss.name);
    for (let k = 2; taken.has(fn) || taken.has(`${fn}Grad`) || taken.has(`${fn}RecoverPosterior`); k++) fn = `${tsFunctionName(loss.name)}_${k}`;
    const grad = `${fn}Grad`;
    // The file's own recovery `def` (from the quick fix) keeps its name.
    const own = loss.recover?.userDef ? tsFunctionName(loss.recover.userDef) : null;
    const recover = own && own !== fn && own !== grad && !taken.has(own) ? own : `${fn}RecoverPosterior`;
    taken.add(fn).add(grad).add(recover);
    const v = loss.variable;
    const sig = "pred: ArrayLike<number>, target: ArrayLike<number>";
    const out: string[] = [];
    out.push(...lossHeaderLines(loss, input.source, fn, loss.recover ? recover : null).map((l) => `// ${l}`));
    out.push(`/** Loss \`${loss.name}\`: per-sample y * l1(${v}) + (1 - y) * l0(${v}); pred holds ${loss.input === "prob" ? "probabilities" : "scores"}, target labels in {0, 1}. */`);
    out.push(`export function ${fn}(${sig}, options: LossOptions & { reduction: "none" }): Float64Array;`);
    out.push(`export function ${fn}(${sig}, options?: LossOptions & { reduction?: "mean" | "sum" }): number;`);
    out.push(`export function ${fn}(${sig}, options?: LossOptions): number | Float64Array;`);
    out.push(`export function ${fn}(${sig}, options: LossOptions = {}): number | Float64Array {`);
    out.push("  const n = checkLengths(pred, target, options.weight);");
    out.push("  const out = new Float64Array(n);");
    out.push("  for (let i = 0; i < n; i++) {");
    out.push(`    const ${v} = ${clampTs(v, "pred[i]!", loss.clamp)};`);
    out.push("    const y = target[i]!;");
    out.push(`    out[i] = y * ${paren(printTs(loss.pos, used))} + (1 - y) * ${paren(printTs(loss.neg, used))};`);
    out.push("  }");
    out.push("  return reduce(out, options);");
    out.push("}");
    out.push("");
    out.push(`/** Gradient of ${fn} with respect to pred, in closed form, scaled like the reduction${loss.clamp ? " (zero outside the clamping bounds)" : ""}. */`);
    out.push(`export function ${grad}(${sig}, options: LossOptions = {}): Float64Array {`);
    out.push("  const n = checkLengths(pred, target, options.weight);");
    out.push("  const out = new Float64Array(n);");
    out.push("  for (let i = 0; i < n; i++) {");
    out.push("    const raw = pred[i]!;");
    out.push(`    const ${v} = ${clampTs(v, "raw", loss.clamp)};`);
    out.push("    const y = target[i]!;");
    const g = `y * ${paren(printTs(loss.dpos, used))} + (1 - y) * ${paren(printTs(loss.dneg, used))}`;
    out.push(loss.clamp ? `    out[i] = raw === ${v} ? ${g} : 0;` : `    out[i] = ${g};`);
    out.push("  }");
    out.push("  return scaleGrad(out, options);");
    out.push("}");
    if (loss.recover) {
      out.push("");
      out.push(`/** Posterior estimate eta = l0'(q)/(l0'(q) - l1'(q)) from a prediction q of the improper loss ${fn} (Reid & Williamson 2010, JMLR 11, Cor. 12). */`);
      out.push(`export function ${recover}(pred: number): number {`);
      out.push(`  const q = ${clampTs("q", "pred", loss.recover.clamp)};`);
      out.push(`  return ${printTs(loss.recover.expr, used)};`);
      out.push("}");
    }
    bodies.push(out);
  }
  const needsEps = input.losses.some((l) => l.clamp !== null || (l.recover?.clamp ?? null) !== null);
  const lines: string[] = [
    `// Generated by \`propriety gen --target ts\` from ${input.source}; input scale: ${input.input === "prob" ? "probabilities" : "scores"}.`,
    "// Do not edit by hand: change the .loss file and regenerate.",
    "// Labels are y in {0, 1}; pred, target and weight are number[] or Float64Array of one length.",
    ...input.skipped.map((s) => `// not generated: \`${s.name}\`: ${s.reason}`),
    "",
    ...PRELUDE,
    "",
  ];
  if (needsEps) {
    lines.push("/** Clamping bound for probabilities where a singularity remains (numbers are float64 here; 1e-7 matches the Python targets, where it also suits float32). */");
    lines.push(`const EPS = ${tsNumber(CLAMP_EPS)};`, "");
  }
  for (const h of HELPER_ORDER) if (used.has(h)) lines.push(...HELPERS[h]!, "");
  for (const b of bodies) lines.push(...b, "");
  return lines.join("\n").trimEnd() + "\n";
}
