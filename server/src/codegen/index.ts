/**
 * Code generation entry point: an analysed document becomes a PyTorch, JAX, NumPy or TypeScript module
 * with one function per loss. Pure (no file system): the CLI writes the returned text.
 */
import type { LossAnalysis } from "../analysis/analyse.js";
import { createPipeline, type Pipeline } from "../pipeline/pipeline.js";
import type { DocumentAnalysis, LossReport } from "../pipeline/stages.js";
import { emitJax } from "./emit-jax.js";
import { emitNumpy } from "./emit-numpy.js";
import type { EmitInput } from "./emit-python-common.js";
import { emitTorch } from "./emit-torch.js";
import { emitTs } from "./emit-ts.js";
import { lowerLoss, type InputScale, type LoweredLoss } from "./model.js";
import { commentSafe, sanitiseName } from "./names.js";

export const TARGETS = ["torch", "jax", "numpy", "ts"] as const;
export type Target = (typeof TARGETS)[number];

export interface GenerateOptions {
  target: Target;
  /** What `pred` holds: probabilities (default) or scores (mapped through the link). */
  input?: InputScale;
  /** Generate only this loss (by its name in the file); all generatable losses otherwise. */
  loss?: string;
  /** Generate improper losses too (with a WARNING header line and, where possible, a recovery map). */
  allowImproper?: boolean;
  /** Parameter values to bake in instead of the defaults. */
  overrides?: Record<string, number>;
  /** Use the canonical link (ψ' = w) for score input. */
  link?: "declared" | "canonical";
  /** The source file name for headers and the default output name. */
  sourceName?: string;
}

/** The module text and its default file name, with the losses that could not be generated and why (listed in the header too). */
export type GenerateResult =
  | { ok: true; code: string; fileName: string; skipped: { name: string; reason: string }[] }
  | { ok: false; message: string };

const EXTENSIONS: Record<Target, string> = { torch: "py", jax: "py", numpy: "py", ts: "ts" };

/** True when `t` names a supported target. */
export function isTarget(t: string): t is Target {
  return (TARGETS as readonly string[]).includes(t);
}

/**
 * Generates the module for one document. With `loss`, that loss must generate or the result is an error;
 * without it, losses that cannot be generated are listed in the header and the others are emitted (an
 * error only when none can be).
 */
export function generate(doc: DocumentAnalysis, options: GenerateOptions): GenerateResult {
  try {
    if (!isTarget(options.target)) {
      return { ok: false, message: `unknown target '${String(options.target)}'; the targets are ${TARGETS.join(", ")}` };
    }
    const source = options.sourceName ?? "<input>";
    const reports = options.loss === undefined ? doc.losses : doc.losses.filter((l) => l.info.name === options.loss);
    if (options.loss !== undefined && reports.length === 0) {
      const names = doc.losses.map((l) => l.info.name);
      return { ok: false, message: `no loss named \`${options.loss}\` in ${source}${names.length > 0 ? `; the losses are ${names.map((n) => `\`${n}\``).join(", ")}` : ""}` };
    }
    if (reports.length === 0) return { ok: false, message: `${source} defines no loss` };
    const overrides = options.overrides ?? {};
    const known = new Set(reports.flatMap((r) => r.compiled?.paramNames ?? []));
    const unknown = Object.keys(overrides).filter((k) => !known.has(k));
    if (unknown.length > 0) {
      return { ok: false, message: `unknown parameter${unknown.length > 1 ? "s" : ""} ${unknown.map((u) => `\`${u}\``).join(", ")} (--set); the parameters are ${[...known].map((k) => `\`${k}\``).join(", ") || "none"}` };
    }
    // Losses with overridden parameters are re-analysed at the values baked in (one pipeline, the document's settings).
    let pipeline: Pipeline | null = null;
    const losses: LoweredLoss[] = [];
    const skipped: { name: string; reason: string }[] = [];
    for (const r of reports) {
      // Each loss gets only the overrides of the parameters it uses.
      const own = Object.fromEntries(Object.entries(overrides).filter(([k]) => r.compiled?.paramNames.includes(k)));
      const differs = r.compiled?.family.params.some((p) => Object.prototype.hasOwnProperty.call(own, p.name) && own[p.name] !== p.default) ?? false;
      let pinned: { analysis: LossAnalysis | null; reason: string | null } | undefined;
      if (differs && inRange(r, own)) {
        pipeline ??= createPipeline(doc.settings);
        const at = pipeline.analyseAt(doc, r.info.name, own);
        pinned = { analysis: at.analysis, reason: at.reason };
      }
      const lowered = lowerLoss(r, {
        input: options.input ?? "prob",
        allowImproper: options.allowImproper ?? false,
        overrides: own,
        defs: doc.model.defs,
        ...(pinned ? { pinned } : {}),
        ...(options.link ? { link: options.link } : {}),
      });
      if (lowered.ok) losses.push(lowered.loss);
      else skipped.push({ name: r.info.name, reason: lowered.message });
    }
    if (losses.length === 0) {
      return { ok: false, message: skipped.map((s) => (reports.length === 1 ? s.reason : `\`${s.name}\`: ${s.reason}`)).join("\n") };
    }
    // The file name and the reasons are printed in comments: no line terminator may survive in them.
    const input: EmitInput = {
      source: commentSafe(source),
      input: options.input ?? "prob",
      losses,
      skipped: skipped.map((s) => ({ name: s.name, reason: commentSafe(s.reason) })),
    };
    const code = emit(options.target, input);
    return { ok: true, code, fileName: outputName(options, source), skipped };
  } catch (err) {
    // Emitters throw only on expressions the lowering should have refused; report instead of crashing.
    return { ok: false, message: `internal error in code generation: ${err instanceof Error ? err.message : String(err)}` };
  }
}

/** True when every overridden value lies in its declared range (the lowering refuses the others before any analysis). */
function inRange(r: LossReport, own: Record<string, number>): boolean {
  return (r.compiled?.family.params ?? []).every((p) => {
    const v = own[p.name];
    return v === undefined || (Number.isFinite(v) && (p.lo === undefined || v >= p.lo) && (p.hi === undefined || v <= p.hi));
  });
}

function emit(target: Target, input: EmitInput): string {
  switch (target) {
    case "torch": return emitTorch(input);
    case "jax": return emitJax(input);
    case "numpy": return emitNumpy(input);
    case "ts": return emitTs(input);
  }
}

/** `<loss or file stem>_<target>.<ext>`, an importable module name. */
function outputName(options: GenerateOptions, source: string): string {
  const stem = options.loss ?? (source.split(/[\\/]/).pop() ?? "losses").replace(/\.loss$/, "");
  const base = sanitiseName(stem.replace(/[^A-Za-z0-9_]/g, "_") || "losses", "python");
  return `${base}_${options.target}.${EXTENSIONS[options.target]}`;
}
