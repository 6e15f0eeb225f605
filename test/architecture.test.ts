/**
 * The layering invariants of DEVELOPERS.md, checked on the source text: the core (grammar, syntax,
 * semantics, analysis, codegen, service and the shared modules) never touches the editor, the LSP
 * connection, the file system, the process or the console, and lower layers never import higher ones.
 */
import { readdirSync, readFileSync, statSync } from "node:fs";
import { join, relative } from "node:path";
import { describe, expect, it } from "vitest";

function sources(dir: string): string[] {
  const out: string[] = [];
  for (const name of readdirSync(dir)) {
    const p = join(dir, name);
    if (statSync(p).isDirectory()) out.push(...sources(p));
    else if (name.endsWith(".ts") && !name.endsWith(".d.ts")) out.push(p);
  }
  return out;
}

const CORE = ["grammar", "server/src/syntax", "server/src/semantics", "server/src/analysis", "server/src/codegen", "server/src/service"];
const SHARED = ["server/src/issue.ts", "server/src/issues.ts", "server/src/loss-model.ts", "server/src/protocol.ts", "server/src/display.ts", "server/src/version.ts"];
const coreFiles = [...CORE.flatMap(sources), ...SHARED];

/** Import specifiers of a file (static imports, re-exports and dynamic imports). */
function imports(text: string): string[] {
  return [...text.matchAll(/(?:import|export)[^"';]*?from\s*["']([^"']+)["']|import\(\s*["']([^"']+)["']\s*\)/g)].map((m) => m[1] ?? m[2]!);
}

describe("layering", () => {
  it.each(coreFiles.map((f) => [f]))("%s uses no editor, LSP, file system, process or console", (file) => {
    const text = readFileSync(file, "utf8");
    const bad = imports(text).filter((s) => /^(vscode|vscode-languageserver|vscode-languageclient|vscode-jsonrpc)/.test(s) || /^(node:|fs$|path$|os$|child_process$)/.test(s));
    expect(bad, `forbidden imports in ${file}`).toEqual([]);
    // Comments may mention them; code may not.
    const code = text.replace(/\/\*[\s\S]*?\*\//g, "").replace(/\/\/.*$/gm, "");
    expect(/\bprocess\.|\bconsole\./.test(code), `process/console in ${file}`).toBe(false);
  });

  // grammar ← syntax ← semantics ← analysis ← {service, codegen} ← {lsp, cli}: codegen reads the model and the
  // analysis results (through the service's document type), and only the shells sit above the service.
  const rank: Record<string, number> = { grammar: 0, syntax: 1, semantics: 2, analysis: 3, codegen: 4, service: 4, lsp: 5, cli: 5 };
  const layerOf = (file: string): string | null => {
    const rel = relative(".", file).split("\\").join("/");
    if (rel.startsWith("grammar/")) return "grammar";
    const m = /^server\/src\/([a-z]+)\//.exec(rel);
    return m && m[1]! in rank ? m[1]! : null;
  };
  const allServer = [...sources("grammar"), ...sources("server/src")];
  it.each(allServer.filter((f) => layerOf(f) !== null).map((f) => [f]))("%s imports only from its own or lower layers", (file) => {
    const own = layerOf(file)!;
    const text = readFileSync(file, "utf8");
    const upward: string[] = [];
    for (const spec of imports(text)) {
      if (!spec.startsWith(".")) continue;
      const target = join(file, "..", spec).replace(/\.js$/, ".ts");
      const layer = layerOf(target);
      if (layer === null) continue;
      const allowed = rank[layer]! <= rank[own]!;
      if (!allowed) upward.push(spec);
    }
    expect(upward, `${file} imports a higher layer`).toEqual([]);
  });

  it("the client imports from the server only the shared modules", () => {
    const offenders: string[] = [];
    for (const file of [...sources("client/src"), ...sources("client/media")]) {
      for (const spec of imports(readFileSync(file, "utf8"))) {
        if (spec.includes("server/src/") && !/server\/src\/(protocol|display|version)\.js$/.test(spec)) offenders.push(`${file}: ${spec}`);
      }
    }
    expect(offenders).toEqual([]);
  });
});
