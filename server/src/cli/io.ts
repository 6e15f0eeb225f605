/**
 * The command line's contact with the outside world: the I/O interface (real or in-memory for tests),
 * usage errors, and reading the `.loss` files a command is given.
 */
import * as fs from "node:fs";
import * as path from "node:path";
import type { DocumentAnalysis } from "../pipeline/stages.js";
import { createPipeline, type Pipeline } from "../pipeline/pipeline.js";
import { DEFAULT_SETTINGS, settingSpec, type AnalysisSettings } from "../settings.js";

export interface CliIo {
  stdout(text: string): void;
  stderr(text: string): void;
  readFile(p: string): string;
  writeFile(p: string, text: string): void;
  isDirectory(p: string): boolean;
  exists(p: string): boolean;
  listDir(p: string): string[];
}

export const nodeIo: CliIo = {
  stdout: (t) => process.stdout.write(t),
  stderr: (t) => process.stderr.write(t),
  readFile: (p) => fs.readFileSync(p, "utf8"),
  writeFile: (p, t) => {
    fs.mkdirSync(path.dirname(path.resolve(p)), { recursive: true });
    fs.writeFileSync(p, t);
  },
  isDirectory: (p) => fs.statSync(p).isDirectory(),
  exists: (p) => fs.existsSync(p),
  listDir: (p) => fs.readdirSync(p),
};

export class UsageError extends Error {}

/** Expands the command-line paths: files as given, directories searched recursively for *.loss, sorted. */
export function collectFiles(inputs: string[], io: CliIo): string[] {
  const out: string[] = [];
  const walk = (dir: string) => {
    for (const name of io.listDir(dir).sort()) {
      if (name === "node_modules" || name.startsWith(".")) continue;
      const p = path.join(dir, name);
      if (io.isDirectory(p)) walk(p);
      else if (name.endsWith(".loss")) out.push(p);
    }
  };
  for (const input of inputs) {
    if (!io.exists(input)) throw new UsageError(`no such file or directory: ${input}`);
    if (io.isDirectory(input)) walk(input);
    else out.push(input);
  }
  return out;
}

/** Reads one file; on failure says so on stderr and returns null (the caller exits with status 2). */
export function readSource(file: string, io: CliIo): string | null {
  try {
    return io.readFile(file);
  } catch (err) {
    io.stderr(`propriety: cannot read ${file}: ${err instanceof Error ? err.message : String(err)}\n`);
    return null;
  }
}

/**
 * The analysis settings the command line was given: `--threshold C` (the default threshold of losses
 * without a `threshold` clause) and `--grid N` (grid points of the numeric checks), each checked against
 * the range the settings table documents; other settings take their defaults, as in the editor.
 */
export const SETTINGS_OPTIONS = {
  threshold: { type: "string" },
  grid: { type: "string" },
} as const;

export const SETTINGS_HELP = `  --threshold C  decision threshold of losses without a threshold clause (default ${DEFAULT_SETTINGS.defaultThreshold}; editor setting propriety.defaultThreshold)
  --grid N       grid points of the numeric checks (default ${DEFAULT_SETTINGS.gridResolution}; editor setting propriety.analysis.gridResolution)
`;

export function settingsFromArgs(values: { threshold?: string | boolean | string[] | undefined; grid?: string | boolean | string[] | undefined }): Partial<AnalysisSettings> {
  const out: Partial<AnalysisSettings> = {};
  const read = (flag: string, raw: unknown, key: string): number | undefined => {
    if (raw === undefined) return undefined;
    const v = Number(raw);
    const spec = settingSpec(key);
    const lo = spec.minimum ?? -Infinity;
    const hi = spec.maximum ?? Infinity;
    const inside = spec.exclusive ? v > lo && v < hi : v >= lo && v <= hi;
    if (typeof raw !== "string" || raw.trim() === "" || !Number.isFinite(v) || !inside || (spec.type === "integer" && !Number.isInteger(v))) {
      throw new UsageError(`--${flag} expects ${spec.type === "integer" ? "an integer" : "a number"} in ${spec.exclusive ? "(" : "["}${lo}, ${hi}${spec.exclusive ? ")" : "]"}, got '${String(raw)}'`);
    }
    return v;
  };
  const t = read("threshold", values.threshold, "defaultThreshold");
  if (t !== undefined) out.defaultThreshold = t;
  const g = read("grid", values.grid, "analysis.gridResolution");
  if (g !== undefined) out.gridResolution = g;
  return out;
}

/** Expands the paths, reads and analyses every file through one pipeline; null when a file cannot be read. */
export function loadDocuments(inputs: string[], io: CliIo, settings: Partial<AnalysisSettings> = {}): { file: string; doc: DocumentAnalysis }[] | null {
  const files = collectFiles(inputs, io);
  if (files.length === 0) throw new UsageError(`no .loss files found in ${inputs.join(", ")}`);
  const pipeline: Pipeline = createPipeline(settings);
  const docs: { file: string; doc: DocumentAnalysis }[] = [];
  for (const file of files) {
    const text = readSource(file, io);
    if (text === null) return null;
    docs.push({ file, doc: pipeline.full(text) });
  }
  return docs;
}
