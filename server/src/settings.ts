/**
 * The `propriety.*` settings, defined once: key, type, default, range and description. The pipeline,
 * the language server, the CLI and the VS Code client read their defaults from here, and a test checks
 * that package.json's `contributes.configuration` says the same. Imports nothing (the client bundles it).
 */

/** One setting as the editor shows it. */
export interface SettingSpec {
  /** Key under `propriety.` (dotted for nested settings, e.g. `analysis.gridResolution`). */
  key: string;
  type: "integer" | "number" | "string";
  default: number | string;
  /** Inclusive bounds for integers; exclusive bounds for `number` settings marked `exclusive`. */
  minimum?: number;
  maximum?: number;
  exclusive?: boolean;
  enum?: readonly string[];
  /** "window" for settings that are not per-resource. */
  scope?: "window";
  description: string;
}

/**
 * Every setting. The grid of 201 points puts q = ½ on the grid (common practice: an odd count makes the
 * symmetric point a node); 11 points are the fewest with which the scans still bracket a minimum.
 */
export const SETTINGS: readonly SettingSpec[] = [
  { key: "analysis.gridResolution", type: "integer", default: 201, minimum: 11, maximum: 5001, description: "Number of grid points on (0, 1) used by the numeric checks." },
  { key: "analysis.deadlineMs", type: "integer", default: 2000, minimum: 50, maximum: 60000, description: "Time budget of the engine per loss, in milliseconds; a check that runs out says \"unknown (time budget)\" instead of guessing." },
  { key: "defaultThreshold", type: "number", default: 0.5, minimum: 0, maximum: 1, exclusive: true, description: "Decision threshold c for the cost-weighted regret bounds when a loss has no `threshold` clause." },
  { key: "maxAnalysedLosses", type: "integer", default: 200, minimum: 1, maximum: 100000, description: "Analyse at most this many losses per document (the rest get syntax and name checks only)." },
  { key: "debounceMs", type: "integer", default: 150, minimum: 0, maximum: 5000, description: "Delay after the last edit before the numeric engine runs; syntax and name checks are immediate." },
  { key: "format.indent", type: "integer", default: 2, minimum: 1, maximum: 8, description: "Spaces per indentation level of the formatter (the editor's tab size, when it sends one, takes precedence)." },
  { key: "trace.server", type: "string", default: "off", enum: ["off", "messages", "verbose"], scope: "window", description: "Traces the communication between VS Code and the Propriety language server." },
];

/** The settings that shape analysis and editing, as one typed object. */
export interface AnalysisSettings {
  /** Grid points of the properness scans over q and η. */
  gridResolution: number;
  /** Time budget per engine stage (last resort: verdicts are bounded by step counts). */
  deadlineMs: number;
  /** Threshold c of losses without a `threshold` clause. */
  defaultThreshold: number;
  /** Losses analysed per document. */
  maxAnalysedLosses: number;
  /** Delay before the engine pass in the editor. */
  debounceMs: number;
  /** Spaces per indentation level of the formatter. */
  indent: number;
}

/** Where each field of `AnalysisSettings` lives in the `propriety.*` namespace. */
const FIELD_KEYS: Record<keyof AnalysisSettings, string> = {
  gridResolution: "analysis.gridResolution",
  deadlineMs: "analysis.deadlineMs",
  defaultThreshold: "defaultThreshold",
  maxAnalysedLosses: "maxAnalysedLosses",
  debounceMs: "debounceMs",
  indent: "format.indent",
};

export function settingSpec(key: string): SettingSpec {
  const s = SETTINGS.find((x) => x.key === key);
  if (!s) throw new Error(`unknown setting ${key}`);
  return s;
}

/** The defaults, read from the table. */
export const DEFAULT_SETTINGS: Readonly<AnalysisSettings> = Object.freeze(
  Object.fromEntries(Object.entries(FIELD_KEYS).map(([field, key]) => [field, settingSpec(key).default as number])) as unknown as AnalysisSettings,
);

/**
 * The smallest step inside an exclusive bound that a clamped value moves to (a threshold of exactly 0 or 1
 * has no cost-weighted meaning; 1e-6 is far below any threshold a user would set).
 */
const EXCLUSIVE_MARGIN = 1e-6;

/** Reads a nested value (`analysis.gridResolution`) of a plain object; undefined when absent. */
function pick(raw: unknown, key: string): unknown {
  let v: unknown = raw;
  for (const part of key.split(".")) {
    if (v === null || typeof v !== "object") return undefined;
    v = (v as Record<string, unknown>)[part];
  }
  return v;
}

/**
 * Turns whatever a client or a command line sent into valid settings: a missing value takes the
 * default silently; a wrong-typed value takes the default and a value out of range is clamped to the
 * documented range, each with a log line. Never throws.
 */
export function normaliseSettings(raw: unknown, log: (message: string) => void = () => undefined, base: Readonly<AnalysisSettings> = DEFAULT_SETTINGS): AnalysisSettings {
  const out = { ...base };
  for (const [field, key] of Object.entries(FIELD_KEYS) as [keyof AnalysisSettings, string][]) {
    const spec = settingSpec(key);
    const v = pick(raw, key);
    if (v === undefined || v === null) continue;
    if (typeof v !== "number" || !Number.isFinite(v)) {
      log(`setting propriety.${key}: ${JSON.stringify(v) ?? String(v)} is not a finite number; using ${base[field]}`);
      continue;
    }
    let x = spec.type === "integer" ? Math.round(v) : v;
    const lo = spec.minimum ?? -Infinity;
    const hi = spec.maximum ?? Infinity;
    const min = spec.exclusive ? lo + EXCLUSIVE_MARGIN : lo;
    const max = spec.exclusive ? hi - EXCLUSIVE_MARGIN : hi;
    if (x < min || x > max) {
      const clamped = Math.min(max, Math.max(min, x));
      log(`setting propriety.${key}: ${v} is outside ${spec.exclusive ? "(" : "["}${lo}, ${hi}${spec.exclusive ? ")" : "]"}; clamped to ${clamped}`);
      x = clamped;
    } else if (x !== v) {
      log(`setting propriety.${key}: ${v} is not an integer; using ${x}`);
    }
    out[field] = x;
  }
  return out;
}

/**
 * Settings (all or some) as the nested `propriety.*` object a client sends (initializationOptions,
 * didChangeConfiguration) and `normaliseSettings` reads; absent fields stay absent.
 */
export function toClientShape(s: Partial<AnalysisSettings>): Record<string, unknown> {
  const out: Record<string, unknown> = {};
  for (const [field, key] of Object.entries(FIELD_KEYS) as [keyof AnalysisSettings, string][]) {
    if (s[field] === undefined) continue;
    const parts = key.split(".");
    let o = out;
    for (const p of parts.slice(0, -1)) o = (o[p] ??= {}) as Record<string, unknown>;
    o[parts.at(-1)!] = s[field];
  }
  return out;
}
