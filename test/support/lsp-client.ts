/**
 * A real LSP client for tests: spawns `node dist/server.js --stdio` and speaks JSON-RPC over its pipes
 * (vscode-jsonrpc), tracking the diagnostics the server publishes. Builds the server bundle first when
 * it is missing or older than the sources.
 */
import { spawn, type ChildProcess } from "node:child_process";
import { existsSync, readdirSync, readFileSync, renameSync, statSync } from "node:fs";
import * as path from "node:path";
import { createMessageConnection, StreamMessageReader, StreamMessageWriter, type MessageConnection } from "vscode-jsonrpc/node";
import type {
  ClientCapabilities, Diagnostic, InitializeResult, PublishDiagnosticsParams, Range, TextDocumentContentChangeEvent,
} from "vscode-languageserver-protocol";

/** The project root: the nearest directory upwards from the working directory whose package.json is this project's. */
function findRoot(start: string): string {
  let dir = path.resolve(start);
  for (let i = 0; i < 20; i++) {
    const pkg = path.join(dir, "package.json");
    if (existsSync(pkg) && /"name":\s*"propriety"/.test(readFileSync(pkg, "utf8"))) return dir;
    const up = path.dirname(dir);
    if (up === dir) break;
    dir = up;
  }
  return path.resolve(start);
}

export const ROOT = findRoot(process.cwd());
export const SERVER_JS = path.join(ROOT, "dist", "server.js");

function newestMtime(dir: string): number {
  let newest = 0;
  for (const entry of readdirSync(dir, { withFileTypes: true })) {
    const p = path.join(dir, entry.name);
    if (entry.isDirectory()) newest = Math.max(newest, newestMtime(p));
    else if (entry.name.endsWith(".ts")) newest = Math.max(newest, statSync(p).mtimeMs);
  }
  return newest;
}

/** Builds dist/server.js when missing or stale; written to a temporary file and renamed, so a parallel reader never sees half a bundle. */
export async function ensureServerBuilt(): Promise<string> {
  const sources = Math.max(newestMtime(path.join(ROOT, "server", "src")), newestMtime(path.join(ROOT, "grammar")));
  if (existsSync(SERVER_JS) && statSync(SERVER_JS).mtimeMs >= sources) return SERVER_JS;
  // A computed specifier keeps bundlers (scripts/bench.mjs) from trying to bundle esbuild itself.
  const esbuild = "esbuild";
  const { build } = (await import(esbuild)) as typeof import("esbuild");
  const tmp = `${SERVER_JS}.${process.pid}.tmp`;
  await build({
    entryPoints: [path.join(ROOT, "server", "src", "lsp", "main.ts")], outfile: tmp,
    bundle: true, platform: "node", format: "cjs", target: "node20", logLevel: "warning",
  });
  renameSync(tmp, SERVER_JS);
  return SERVER_JS;
}

export const DEFAULT_CAPABILITIES: ClientCapabilities = {
  textDocument: {
    publishDiagnostics: { relatedInformation: true, versionSupport: true },
    completion: { completionItem: { snippetSupport: true } },
    hover: { contentFormat: ["markdown", "plaintext"] },
    rename: { prepareSupport: true },
    codeAction: { codeActionLiteralSupport: { codeActionKind: { valueSet: ["quickfix", "refactor", "refactor.rewrite"] } } },
  },
  workspace: { configuration: false },
};

export interface StartOptions {
  capabilities?: ClientCapabilities;
  initializationOptions?: unknown;
}

/** One server process and the JSON-RPC connection to it. */
export class LspTestClient {
  readonly diagnostics = new Map<string, PublishDiagnosticsParams>();
  readonly logs: string[] = [];
  /** The latest version per document whose full (engine) analysis the server announced. */
  readonly analysed = new Map<string, number>();
  private readonly versions = new Map<string, number>();
  private readonly waiters: { check: () => boolean; resolve: () => void }[] = [];
  initializeResult: InitializeResult | null = null;

  private constructor(private readonly proc: ChildProcess, readonly connection: MessageConnection) {}

  static async start(options: StartOptions = {}): Promise<LspTestClient> {
    const server = await ensureServerBuilt();
    const proc = spawn(process.execPath, [server, "--stdio"], { stdio: ["pipe", "pipe", "pipe"] });
    const connection = createMessageConnection(new StreamMessageReader(proc.stdout!), new StreamMessageWriter(proc.stdin!));
    const client = new LspTestClient(proc, connection);
    connection.onNotification("textDocument/publishDiagnostics", (p: PublishDiagnosticsParams) => {
      client.diagnostics.set(p.uri, p);
      client.wake();
    });
    connection.onNotification("window/logMessage", (p: { message: string }) => void client.logs.push(p.message));
    connection.onNotification("propriety/analysed", (p: { uri: string; version: number }) => {
      client.analysed.set(p.uri, p.version);
      client.wake();
    });
    connection.onRequest("workspace/codeLens/refresh", () => null);
    connection.onRequest("client/registerCapability", () => null);
    connection.listen();
    client.initializeResult = await connection.sendRequest("initialize", {
      processId: process.pid,
      rootUri: null,
      capabilities: options.capabilities ?? DEFAULT_CAPABILITIES,
      initializationOptions: options.initializationOptions ?? null,
    });
    await connection.sendNotification("initialized", {});
    return client;
  }

  private wake(): void {
    for (const w of [...this.waiters]) {
      if (w.check()) {
        this.waiters.splice(this.waiters.indexOf(w), 1);
        w.resolve();
      }
    }
  }

  /** Resolves when `check` holds (checked now and after each notification), rejects after the timeout. */
  waitFor(check: () => boolean, timeoutMs = 10_000, what = "condition"): Promise<void> {
    if (check()) return Promise.resolve();
    return new Promise((resolve, reject) => {
      const w = { check, resolve: () => { clearTimeout(timer); resolve(); } };
      const timer = setTimeout(() => {
        this.waiters.splice(this.waiters.indexOf(w), 1);
        reject(new Error(`timed out waiting for ${what}`));
      }, timeoutMs);
      this.waiters.push(w);
    });
  }

  /** The diagnostics published for exactly this version of the document. */
  async diagnosticsFor(uri: string, version = this.versions.get(uri) ?? 0, timeoutMs = 10_000): Promise<Diagnostic[]> {
    await this.waitFor(() => this.diagnostics.get(uri)?.version === version, timeoutMs, `diagnostics of ${uri} v${version}`);
    return this.diagnostics.get(uri)!.diagnostics;
  }

  /** The diagnostics of the latest version after the engine's pass (the server's `propriety/analysed` notification follows it). */
  async settledDiagnostics(uri: string, timeoutMs = 60_000): Promise<Diagnostic[]> {
    const version = this.versions.get(uri) ?? 0;
    await this.waitFor(() => this.analysed.get(uri) === version && this.diagnostics.get(uri)?.version === version, timeoutMs, `analysis of ${uri} v${version}`);
    return this.diagnostics.get(uri)!.diagnostics;
  }

  async open(uri: string, text: string, languageId = "loss"): Promise<void> {
    this.versions.set(uri, 1);
    await this.connection.sendNotification("textDocument/didOpen", { textDocument: { uri, languageId, version: 1, text } });
  }

  /** Sends incremental (range) or full changes; returns the new version. */
  async change(uri: string, changes: TextDocumentContentChangeEvent[]): Promise<number> {
    const version = (this.versions.get(uri) ?? 0) + 1;
    this.versions.set(uri, version);
    await this.connection.sendNotification("textDocument/didChange", { textDocument: { uri, version }, contentChanges: changes });
    return version;
  }

  async close(uri: string): Promise<void> {
    await this.connection.sendNotification("textDocument/didClose", { textDocument: { uri } });
  }

  request<R>(method: string, params: unknown): Promise<R> {
    return this.connection.sendRequest(method, params) as Promise<R>;
  }

  get exited(): boolean {
    return this.proc.exitCode !== null || this.proc.signalCode !== null;
  }

  async stop(): Promise<void> {
    if (this.exited) return;
    try {
      await Promise.race([this.connection.sendRequest("shutdown"), new Promise((r) => setTimeout(r, 2000))]);
      await this.connection.sendNotification("exit");
    } catch {
      // The process may already be gone; it is killed below either way.
    }
    await new Promise<void>((resolve) => {
      if (this.exited) return resolve();
      const t = setTimeout(() => {
        this.proc.kill();
        resolve();
      }, 2000);
      this.proc.once("exit", () => {
        clearTimeout(t);
        resolve();
      });
    });
    this.connection.dispose();
  }
}

/** Applies LSP text edits to a text (for before/after checks). */
export function applyLspEdits(text: string, edits: { range: Range; newText: string }[]): string {
  const starts = [0];
  for (let i = 0; i < text.length; i++) if (text[i] === "\n") starts.push(i + 1);
  const off = (p: { line: number; character: number }) => (p.line >= starts.length ? text.length : Math.min(text.length, starts[p.line]! + p.character));
  const sorted = [...edits].sort((a, b) => off(b.range.start) - off(a.range.start));
  let out = text;
  for (const e of sorted) out = out.slice(0, off(e.range.start)) + e.newText + out.slice(off(e.range.end));
  return out;
}

/** The LSP position of an offset in a text with LF line ends. */
export function positionOf(text: string, offset: number): { line: number; character: number } {
  const before = text.slice(0, offset);
  const line = before.split("\n").length - 1;
  return { line, character: offset - (before.lastIndexOf("\n") + 1) };
}
