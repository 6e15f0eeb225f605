/**
 * The one analysis pipeline below every consumer: the CLI (`check`, `report`, `gen`), the language
 * service and every LSP request, the curve sampler and the report all read documents from here, so a
 * setting changes every surface the same way and no consumer re-runs a stage.
 *
 * It holds the one `AnalysisSettings` object, the per-loss engine cache (keyed by the loss's text and the
 * globals and helpers it uses; cleared when the settings change), the latest documents by text, and the
 * cache of `analyseAt` (a loss analysed at other parameter values: the viewer's sliders).
 *
 * Three depths of a document: `fast` (syntax, semantics and engine results already cached; never runs
 * the engine), `full` (the engine on every analysable loss, up to `maxAnalysedLosses`) and
 * `incremental` (the full analysis one loss at a time, abandoned when a newer text arrives).
 */
import type { LossAnalysis } from "../analysis/analyse.js";
import type { CompiledLoss } from "../semantics/family.js";
import { deriveLossFunctions } from "../analysis/derive.js";
import { makeIssue, type Issue } from "../issue.js";
import type { LossFamily, LossFunctions } from "../loss-model.js";
import { DEFAULT_SETTINGS, normaliseSettings, toClientShape, type AnalysisSettings } from "../settings.js";
import {
  analyseStage, byPosition, compileStage, engineOptions, enrichFindings, isAnalysable, lossCacheKey, parseAndResolve,
  type DocumentAnalysis, type LossReport,
} from "./stages.js";

/** Engine results kept before the oldest are dropped (a few hundred losses of edit history). */
const MAX_CACHE_ENTRIES = 2000;
/** Documents remembered by text (the open documents' latest versions; each holds a whole AST, so few). */
const MAX_MEMO = 4;
/**
 * Analyses at slider values kept (least recently used dropped first). While a slider moves only its own
 * loss changes; the other losses of an overlay come from here.
 */
const MAX_PINNED = 48;

/** A loss analysed at given parameter values (`analyseAt`). */
export interface PinnedAnalysis {
  loss: string;
  /** The values used: defaults, overridden by the request, clamped to the declared ranges. */
  values: Record<string, number>;
  /** True when some value differs from the declared default. */
  overridden: boolean;
  /** The engine's analysis at `values` (the document's own analysis when nothing is overridden). */
  analysis: LossAnalysis | null;
  /** The derived model at `values` (from the analysis, or derived directly when the engine could not). */
  fns: LossFunctions | null;
  /** Statements about the request (values clamped or ignored). */
  notes: string[];
  /** Why the loss cannot be analysed or drawn, when it cannot. */
  reason: string | null;
}

export interface Pipeline {
  readonly settings: Readonly<AnalysisSettings>;
  /** Replaces the settings (normalised: clamped to the documented ranges); drops every cached result. */
  configure(settings: Partial<AnalysisSettings>, log?: (message: string) => void): void;
  /** Syntax, semantics and cached engine findings; never runs the engine. */
  fast(text: string): DocumentAnalysis;
  /** The complete analysis (the engine runs on losses not yet cached). */
  full(text: string): DocumentAnalysis;
  /**
   * The complete analysis, one loss at a time, yielding between losses; resolves to null as soon as
   * `isStale()` says a newer text has arrived (work already done stays in the cache).
   */
  incremental(text: string, isStale: () => boolean, pause: () => Promise<void>): Promise<DocumentAnalysis | null>;
  /** One loss of a fully analysed document at other parameter values (the sliders, sweeps, fits). */
  analyseAt(doc: DocumentAnalysis, loss: string, values: Record<string, number>): PinnedAnalysis;
}

export interface PipelineOptions {
  /** Seed of the engine's sampling (fixed by default, so every run gives the same answer). */
  seed?: number;
  /** Clock of the engine's last-resort deadline (tests inject one). */
  clock?: () => number;
}

/** Creates a pipeline with the given settings (missing ones take their defaults). */
export function createPipeline(initial: Partial<AnalysisSettings> = {}, options: PipelineOptions = {}): Pipeline {
  let settings: AnalysisSettings = normaliseSettings(toClientShape(initial));
  /** Engine results with the compiled loss they came from (both a function of the key and the settings). */
  const cache = new Map<string, { analysis: LossAnalysis; compiled: CompiledLoss }>();
  const memo: { text: string; doc: DocumentAnalysis; full: boolean }[] = [];
  const pinned = new Map<string, PinnedAnalysis>();
  const engine = () => engineOptions(settings, options);

  const remember = (text: string, doc: DocumentAnalysis, full: boolean): DocumentAnalysis => {
    const i = memo.findIndex((m) => m.text === text);
    if (i >= 0) memo.splice(i, 1);
    memo.unshift({ text, doc, full });
    if (memo.length > MAX_MEMO) memo.length = MAX_MEMO;
    // A Map iterates in insertion order, so the first keys are the oldest.
    while (cache.size > MAX_CACHE_ENTRIES) cache.delete(cache.keys().next().value!);
    return doc;
  };
  const recall = (text: string, needFull: boolean): DocumentAnalysis | null => {
    const m = memo.find((x) => x.text === text);
    return m && (m.full || !needFull) ? m.doc : null;
  };

  /** Parse and resolve, with the cached engine results of unchanged losses (so they do not flicker while typing). */
  const buildFast = (text: string): DocumentAnalysis =>
    guarded(text, settings, () => {
      const { parsed, model, issues } = parseAndResolve(text);
      const losses: LossReport[] = model.losses.map((info) => ({ info, compiled: null, analysis: null }));
      for (const r of losses) {
        if (!isAnalysable(r)) continue;
        const hit = cache.get(lossCacheKey(text, model, r.info));
        if (!hit) continue;
        r.compiled = hit.compiled;
        r.analysis = hit.analysis;
        issues.push(...enrichFindings(r, model));
      }
      issues.sort(byPosition);
      return { text, parse: parsed, model, losses, issues, settings };
    });

  /** Compiles and analyses one loss, through the cache; returns the issue of a failing stage. */
  const analyseLoss = (doc: DocumentAnalysis, r: LossReport): Issue | null => {
    const key = lossCacheKey(doc.text, doc.model, r.info);
    const hit = cache.get(key);
    if (hit) {
      // Compiled and analysed before (by the incremental pass, or for an earlier text): no stage re-runs.
      r.compiled = hit.compiled;
      r.analysis = hit.analysis;
      return null;
    }
    const compiled = compileStage(doc.model, r, settings);
    if (!compiled.ok) return compiled.issue;
    if (!r.compiled) return null;
    const outcome = analyseStage(r, engine());
    if ("issue" in outcome) return outcome.issue;
    r.analysis = outcome.analysis;
    if (r.analysis) cache.set(key, { analysis: r.analysis, compiled: r.compiled });
    return null;
  };

  /** Fills in what the fast pass left out: compilation, the engine and enrichment for the first `maxAnalysedLosses` losses. */
  const complete = (doc: DocumentAnalysis): DocumentAnalysis => {
    const max = settings.maxAnalysedLosses;
    let n = 0;
    let added = false;
    for (const r of doc.losses) {
      if (!isAnalysable(r)) continue;
      if (++n > max) {
        if (n === max + 1) {
          doc.issues.push(makeIssue("analysis-unknown", `only the first ${max} losses of this file are analysed`, r.info.decl.name.span, { severity: "information" }));
          added = true;
        }
        continue;
      }
      if (r.analysis) continue;
      const issue = analyseLoss(doc, r);
      if (issue) doc.issues.push(issue);
      else doc.issues.push(...enrichFindings(r, doc.model));
      added = true;
    }
    if (added) doc.issues.sort(byPosition);
    return doc;
  };

  const fast = (text: string): DocumentAnalysis => {
    const known = recall(text, false);
    if (known) return known;
    const doc = buildFast(text);
    const analysable = doc.losses.filter(isAnalysable);
    const done = analysable.length <= settings.maxAnalysedLosses && analysable.every((r) => r.analysis !== null);
    return remember(text, doc, done);
  };

  const full = (text: string): DocumentAnalysis => {
    const known = recall(text, true);
    if (known) return known;
    const doc = recall(text, false) ?? buildFast(text);
    return remember(text, guarded(text, settings, () => complete(doc)), true);
  };

  const analyseAt = (doc: DocumentAnalysis, loss: string, requested: Record<string, number>): PinnedAnalysis => {
    const r = doc.losses.find((l) => l.info.name === loss);
    const empty = (reason: string): PinnedAnalysis => ({ loss, values: {}, overridden: false, analysis: null, fns: null, notes: [], reason });
    if (!r) return empty("no loss of that name in the document");
    if (!r.compiled) return empty(r.info.hasErrors ? "the loss has errors (see the diagnostics)" : "the loss could not be compiled");
    const family = r.compiled.family;
    const notes: string[] = [];
    const values = resolveValues(family, requested, notes);
    const overridden = family.params.some((p) => values[p.name] !== p.default);
    if (!overridden) return withModel({ loss, values, overridden, analysis: r.analysis, fns: r.analysis?.fns ?? null, notes, reason: null }, family);
    const key = [lossCacheKey(doc.text, doc.model, r.info), JSON.stringify(Object.entries(values).sort())].join("\u0001");
    let hit = pinned.get(key);
    if (hit) {
      pinned.delete(key);
    } else {
      let analysis: LossAnalysis | null = null;
      let reason: string | null = null;
      const outcome = analyseStage({ ...r, compiled: { ...r.compiled, family: pinnedFamily(family, values) } }, engine());
      if ("issue" in outcome) reason = outcome.issue.message;
      else analysis = outcome.analysis;
      hit = withModel({ loss, values, overridden, analysis, fns: analysis?.fns ?? null, notes: [], reason }, family);
    }
    pinned.set(key, hit);
    while (pinned.size > MAX_PINNED) pinned.delete(pinned.keys().next().value!);
    return { ...hit, notes: [...notes, ...hit.notes] };
  };

  return {
    get settings() {
      return settings;
    },
    configure(next, log) {
      settings = normaliseSettings(toClientShape(next), log, settings);
      cache.clear();
      memo.length = 0;
      pinned.clear();
    },
    fast,
    full,
    async incremental(text, isStale, pause) {
      const known = recall(text, true);
      if (known) return known;
      const doc = fast(text);
      let n = 0;
      for (const r of doc.losses) {
        if (!isAnalysable(r)) continue;
        if (++n > settings.maxAnalysedLosses) break;
        if (r.analysis || cache.has(lossCacheKey(text, doc.model, r.info))) continue;
        // Work only fills the cache here; `full` below records issues (and failures) in document order.
        try {
          analyseLoss(doc, { ...r, analysis: null });
        } catch {
          // A failure is reported by `full`, which retries the loss and records the issue.
        }
        await pause();
        if (isStale()) return null;
      }
      return full(text);
    },
    analyseAt,
  };
}

/** The derived model at the values, when the engine did not leave one (an undecided verdict, say). */
function withModel(p: PinnedAnalysis, family: LossFamily): PinnedAnalysis {
  if (p.fns || p.reason) return p;
  try {
    const derived = deriveLossFunctions(family.instantiate(p.values));
    if (derived.fns) return { ...p, fns: derived.fns };
    return { ...p, reason: derived.findings[0]?.message ?? "the partial losses could not be derived" };
  } catch (err) {
    return { ...p, reason: `the loss could not be instantiated: ${err instanceof Error ? err.message : String(err)}` };
  }
}

/** The parameter values to use: defaults, then requested values clamped to the declared ranges. */
function resolveValues(family: LossFamily, requested: Record<string, number>, notes: string[]): Record<string, number> {
  const values: Record<string, number> = {};
  for (const p of family.params) values[p.name] = p.default;
  for (const [n, v] of Object.entries(requested)) {
    const p = family.params.find((x) => x.name === n);
    if (!p) {
      notes.push(`Value for unknown parameter \`${n}\` ignored.`);
      continue;
    }
    if (typeof v !== "number" || !Number.isFinite(v)) {
      notes.push(`Value ${String(v)} for \`${n}\` is not a finite number; the default ${p.default} is used.`);
      continue;
    }
    const clamped = Math.min(p.hi ?? Infinity, Math.max(p.lo ?? -Infinity, v));
    if (clamped !== v) notes.push(`\`${n}\` = ${v} is outside its declared range; clamped to ${clamped}.`);
    values[n] = clamped;
  }
  return values;
}

/** The same family with every parameter pinned to `values` and no ranges (so no range sweep runs). */
function pinnedFamily(family: LossFamily, values: Record<string, number>): LossFamily {
  return {
    name: family.name,
    form: family.form,
    claims: family.claims,
    params: family.params.map((p) => ({ name: p.name, default: values[p.name] ?? p.default })),
    instantiate: (v) => family.instantiate(v),
  };
}

/** Runs a stage sequence; should it throw despite its own guards, the document gets one internal-error issue instead. */
function guarded(text: string, settings: AnalysisSettings, run: () => DocumentAnalysis): DocumentAnalysis {
  try {
    return run();
  } catch (err) {
    const { parsed, model } = parseAndResolve("");
    return {
      text, parse: parsed, model, losses: [], settings,
      issues: [makeIssue("internal-error", `internal error while checking the document: ${String(err)}`, { start: 0, end: Math.min(1, text.length) })],
    };
  }
}

/** Options of a one-shot analysis: settings, the engine's seed and clock, and how deep to go. */
export interface DocumentOptions extends Partial<AnalysisSettings>, PipelineOptions {
  /** Parse, resolve and compile only: no engine (tests of the compiler, the fast path of scripts). */
  skipAnalysis?: boolean;
}

/** One document through the whole pipeline with the given settings (the CLI, scripts and tests). */
export function analyseDocument(text: string, options: DocumentOptions = {}): DocumentAnalysis {
  const { skipAnalysis, seed, clock, ...settings } = options;
  const pipeline = createPipeline(settings, { ...(seed !== undefined ? { seed } : {}), ...(clock ? { clock } : {}) });
  if (!skipAnalysis) return pipeline.full(text);
  const doc = pipeline.fast(text);
  for (const r of doc.losses) {
    const compiled = compileStage(doc.model, r, pipeline.settings);
    if (!compiled.ok) doc.issues.push(compiled.issue);
  }
  doc.issues.sort(byPosition);
  return doc;
}

export { DEFAULT_SETTINGS };
