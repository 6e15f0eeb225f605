/**
 * The layering invariants of DEVELOPERS.md, checked on the source text: the core (grammar, syntax,
 * semantics, analysis, codegen, service and the shared modules) never touches the editor, the LSP
 * connection, the file system, the process or the console, and lower layers never import higher ones.
 */
import { existsSync, readdirSync, readFileSync, statSync } from "node:fs";
import { join, relative } from "node:path";
import { describe, expect, it } from "vitest";

function sources(dir: string): string[] {
  const out: string[] = [];
  if (!existsSync(dir)) return out;
  for (const name of readdirSync(dir)) {
    const p = join(dir, name);
    if (statSync(p).isDirectory()) out.push(...sources(p));
    else if (name.endsWith(".ts") && !name.endsWith(".d.ts")) out.push(p);
  }
  return out;
}

const CORE = ["grammar", "server/src/syntax", "server/src/semantics", "server/src/analysis", "server/src/pipeline", "server/src/codegen", "server/src/products", "server/src/service"];
/** Leaf modules shared by the server, the client and the webview: they import nothing, or only each other. */
const SHARED = ["server/src/issue.ts", "server/src/issues.ts", "server/src/loss-model.ts", "server/src/protocol.ts", "server/src/display.ts", "server/src/version.ts", "server/src/settings.ts"];
/** The shared modules the client bundles may import (plain data and wording; no analysis). */
const CLIENT_SHARED = /server\/src\/(protocol|display|version|settings)\.js$/;
const coreFiles = [...CORE.flatMap(sources), ...SHARED];

/** Import specifiers of a file (static imports, re-exports and dynamic imports). */
function imports(text: string): string[] {
  return [...text.matchAll(/(?:import|export)[^"';]*?from\s*["']([^"']+)["']|import\(\s*["']([^"']+)["']\s*\)/g)].map((m) => m[1] ?? m[2]!);
}

/** The project file a relative specifier points at (`.js` in the source names the `.ts` file). */
function resolveSpec(file: string, spec: string): string {
  return relative(".", join(file, "..", spec).replace(/\.js$/, ".ts")).split("\\").join("/");
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

  // Floors, bottom up: grammar ← syntax ← {semantics, analysis} ← pipeline ← {codegen, products} ← service ← {lsp, cli}.
  // semantics and analysis sit side by side and meet only at loss-model.ts; codegen and the products (curves,
  // report, check output) read analysed documents from the pipeline; the service façade offers them to the
  // editor; only the shells (lsp, cli) sit above it.
  const rank: Record<string, number> = { grammar: 0, syntax: 1, semantics: 2, analysis: 2, pipeline: 3, codegen: 4, products: 4, service: 5, lsp: 6, cli: 6 };
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
    const wrong: string[] = [];
    for (const spec of imports(text)) {
      if (!spec.startsWith(".")) continue;
      const layer = layerOf(resolveSpec(file, spec));
      if (layer === null || layer === own) continue;
      // Same floor, different layer (semantics and analysis; codegen and products): no import either way.
      if (rank[layer]! >= rank[own]!) wrong.push(spec);
    }
    expect(wrong, `${file} imports a higher layer or a sibling on its floor`).toEqual([]);
  });

  it.each(SHARED.map((f) => [f]))("shared module %s imports only other shared modules", (file) => {
    const bad = imports(readFileSync(file, "utf8")).filter((spec) => !SHARED.includes(resolveSpec(file, spec)));
    expect(bad).toEqual([]);
  });

  it("has no import cycle between server modules", () => {
    const graph = new Map<string, string[]>();
    for (const f of allServer) {
      const rel = relative(".", f).split("\\").join("/");
      graph.set(rel, imports(readFileSync(f, "utf8")).filter((s) => s.startsWith(".")).map((s) => resolveSpec(f, s)));
    }
    const state = new Map<string, "open" | "done">();
    const cycles: string[] = [];
    const visit = (n: string, stack: string[]) => {
      if (state.get(n) === "done") return;
      if (state.get(n) === "open") {
        cycles.push([...stack.slice(stack.indexOf(n)), n].join(" → "));
        return;
      }
      state.set(n, "open");
      for (const m of graph.get(n) ?? []) if (graph.has(m)) visit(m, [...stack, n]);
      state.set(n, "done");
    };
    for (const n of graph.keys()) visit(n, []);
    expect(cycles).toEqual([]);
  });

  it("the client imports from the server only the shared modules", () => {
    const offenders: string[] = [];
    for (const file of [...sources("client/src"), ...sources("client/media")]) {
      for (const spec of imports(readFileSync(file, "utf8"))) {
        if (spec.includes("server/src/") && !CLIENT_SHARED.test(spec)) offenders.push(`${file}: ${spec}`);
      }
    }
    expect(offenders).toEqual([]);
  });
});
