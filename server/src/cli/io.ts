/**
 * The command line's contact with the outside world: the I/O interface (real or in-memory for tests),
 * usage errors, and reading the `.loss` files a command is given.
 */
import * as fs from "node:fs";
import * as path from "node:path";
import type { DocumentAnalysis } from "../pipeline/stages.js";
import { createPipeline, type Pipeline } from "../pipeline/pipeline.js";
import { DEFAULT_SETTINGS, settingSpec, type AnalysisSettings } from "../settings.js";

/** What a path is, after following symbolic links (`symlink` says whether the path itself is one). */
export interface PathInfo {
  type: "file" | "directory" | "other" | "missing";
  symlink: boolean;
  /** Size in bytes of a regular file (0 otherwise). */
  size: number;
}

export interface CliIo {
  stdout(text: string): void;
  stderr(text: string): void;
  readFile(p: string): string;
  /** Writes atomically (a temporary sibling, then a rename), never through a symbolic link. */
  writeFile(p: string, data: string | Uint8Array): void;
  isDirectory(p: string): boolean;
  exists(p: string): boolean;
  listDir(p: string): string[];
  /** Type and size of a path (in-memory test I/O may leave it out: then it is derived from isDirectory/exists). */
  info?(p: string): PathInfo;
  /** The canonical absolute path (symbolic links resolved), to compare an output with the inputs. */
  realpath?(p: string): string;
}

/**
 * The largest `.loss` file read (bytes). A specification is text: 4 MiB is about 100,000 lines, far
 * beyond any real file, and refusing beyond it keeps a mistaken path (a log, a device) from being read
 * into memory (common practice).
 */
export const MAX_SOURCE_BYTES = 4 * 1024 * 1024;

function nodeInfo(p: string): PathInfo {
  let symlink = false;
  try {
    symlink = fs.lstatSync(p).isSymbolicLink();
  } catch {
    return { type: "missing", symlink: false, size: 0 };
  }
  try {
    const st = fs.statSync(p);
    return { type: st.isFile() ? "file" : st.isDirectory() ? "directory" : "other", symlink, size: st.isFile() ? st.size : 0 };
  } catch {
    // A dangling link, or one that loops.
    return { type: "missing", symlink, size: 0 };
  }
}

/**
 * Writes `data` to `target` through a temporary sibling and a rename, so a reader never sees a partial
 * file and a failure leaves none; refuses a target that is a symbolic link or a directory.
 */
export function writeAtomically(target: string, data: string | Uint8Array): void {
  const info = nodeInfo(target);
  if (info.symlink) throw new Error(`${target} is a symbolic link; not writing through it`);
  if (info.type === "directory") throw new Error(`${target} is a directory`);
  const dir = path.dirname(path.resolve(target));
  fs.mkdirSync(dir, { recursive: true });
  const tmp = path.join(dir, `.${path.basename(target)}.${process.pid}.${Date.now()}.tmp`);
  try {
    fs.writeFileSync(tmp, data, { flag: "wx" });
    fs.renameSync(tmp, target);
  } catch (err) {
    try {
      fs.rmSync(tmp, { force: true });
    } catch {
      // The temporary may not exist; nothing else to clean up.
    }
    throw err;
  }
}

export const nodeIo: CliIo = {
  stdout: (t) => process.stdout.write(t),
  stderr: (t) => process.stderr.write(t),
  readFile: (p) => fs.readFileSync(p, "utf8"),
  writeFile: writeAtomically,
  isDirectory: (p) => fs.statSync(p).isDirectory(),
  exists: (p) => fs.existsSync(p),
  listDir: (p) => fs.readdirSync(p),
  info: nodeInfo,
  realpath: (p) => fs.realpathSync(p),
};

export class UsageError extends Error {}

/** The path's type and size; derived from `isDirectory`/`exists` for an I/O without `info`. */
export function infoOf(io: CliIo, p: string): PathInfo {
  if (io.info) return io.info(p);
  if (!io.exists(p)) return { type: "missing", symlink: false, size: 0 };
  return { type: io.isDirectory(p) ? "directory" : "file", symlink: false, size: 0 };
}

/**
 * Expands the command-line paths: files as given, directories searched recursively for *.loss, sorted.
 * The walk does not follow symbolically linked directories (a link cycle cannot trap it) and skips
 * entries that are not regular files (FIFOs, devices, dangling links), each with a warning on stderr.
 * A path given explicitly must be a directory or a regular file.
 */
export function collectFiles(inputs: string[], io: CliIo): string[] {
  const out: string[] = [];
  const walk = (dir: string) => {
    for (const name of io.listDir(dir).sort()) {
      if (name === "node_modules" || name.startsWith(".")) continue;
      const p = path.join(dir, name);
      const info = infoOf(io, p);
      if (info.type === "directory") {
        if (info.symlink) io.stderr(`propriety: skipping ${p}: a symbolic link to a directory (not followed)\n`);
        else walk(p);
      } else if (name.endsWith(".loss")) {
        if (info.type === "file") out.push(p);
        else io.stderr(`propriety: skipping ${p}: not a regular file\n`);
      }
    }
  };
  for (const input of inputs) {
    const info = infoOf(io, input);
    if (info.type === "missing") throw new UsageError(`no such file or directory: ${input}`);
    if (info.type === "directory") walk(input);
    else if (info.type === "file") out.push(input);
    else throw new UsageError(`${input} is not a regular file or a directory`);
  }
  return out;
}

/**
 * Refuses an output path that would overwrite an input or a specification: one that resolves to an
 * input file, or ends in `.loss` (unless `force`), or is a symbolic link or a directory.
 */
export function checkOutputPath(out: string, inputs: string[], io: CliIo, force = false): void {
  const info = infoOf(io, out);
  if (info.symlink) throw new UsageError(`--out ${out} is a symbolic link; not writing through it`);
  if (info.type === "directory") throw new UsageError(`--out ${out} is a directory; give a file name`);
  if (info.type === "other") throw new UsageError(`--out ${out} is not a regular file`);
  const canonical = (p: string) => {
    try {
      return io.realpath ? io.realpath(p) : path.resolve(p);
    } catch {
      return path.resolve(p);
    }
  };
  if (info.type === "file") {
    const target = canonical(out);
    const clash = inputs.find((i) => canonical(i) === target);
    if (clash) throw new UsageError(`--out ${out} is the input ${clash}; refusing to overwrite a specification`);
  }
  if (!force && out.toLowerCase().endsWith(".loss")) throw new UsageError(`--out ${out} ends in .loss; refusing to overwrite a specification (use --force if you mean it)`);
}

/** Reads one file; on failure says so on stderr and returns null (the caller exits with status 2). */
export function readSource(file: string, io: CliIo): string | null {
  const info = infoOf(io, file);
  if (info.type !== "file" && info.type !== "missing") {
    io.stderr(`propriety: cannot read ${file}: not a regular file\n`);
    return null;
  }
  if (info.size > MAX_SOURCE_BYTES) {
    io.stderr(`propriety: cannot read ${file}: ${info.size} bytes is more than the ${MAX_SOURCE_BYTES} a .loss file may have\n`);
    return null;
  }
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
