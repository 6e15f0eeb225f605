/**
 * The command line's contact with the outside world: the I/O interface (real or in-memory for tests),
 * usage errors, and reading the `.loss` files a command is given.
 */
import * as fs from "node:fs";
import * as path from "node:path";
import { analyseDocument, type DocumentAnalysis } from "../service/document.js";

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

/** Expands the paths, reads and analyses every file; null when a file cannot be read. */
export function loadDocuments(inputs: string[], io: CliIo): { file: string; doc: DocumentAnalysis }[] | null {
  const files = collectFiles(inputs, io);
  if (files.length === 0) throw new UsageError(`no .loss files found in ${inputs.join(", ")}`);
  const docs: { file: string; doc: DocumentAnalysis }[] = [];
  for (const file of files) {
    const text = readSource(file, io);
    if (text === null) return null;
    docs.push({ file, doc: analyseDocument(text) });
  }
  return docs;
}

