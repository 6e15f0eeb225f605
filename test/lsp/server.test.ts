// The language server end to end: a real JSON-RPC client over stdio against the bundled dist/server.js.
import { readFileSync } from "node:fs";
import * as path from "node:path";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import type { CodeAction, CompletionItem, Diagnostic, DocumentSymbol, Hover, SemanticTokens, TextEdit, WorkspaceEdit } from "vscode-languageserver-protocol";
import { createLanguageService } from "../../server/src/service/language-service.js";
import { applyLspEdits, LspTestClient, positionOf, ROOT } from "../support/lsp-client.js";

let client: LspTestClient;

beforeAll(async () => {
  client = await LspTestClient.start();
});

afterAll(async () => {
  await client?.stop();
});

const td = (uri: string) => ({ textDocument: { uri } });
/** A diagnostic's message as text (LSP 3.18 allows Markup; this server sends strings). */
const messageOf = (d: Diagnostic): string => (typeof d.message === "string" ? d.message : d.message.value);


describe("initialize", () => {
  it("announces the features it serves", () => {
    const caps = client.initializeResult!.capabilities;
    expect(caps.hoverProvider).toBe(true);
    expect(caps.completionProvider).toBeDefined();
    expect(caps.renameProvider).toEqual({ prepareProvider: true });
    expect(caps.documentFormattingProvider).toBe(true);
    expect(caps.semanticTokensProvider?.legend.tokenTypes).toContain("function");
    expect(caps.codeActionProvider).toBeDefined();
    expect(client.initializeResult!.serverInfo?.name).toBe("propriety");
  });
});

describe("diagnostics", () => {
  it("publishes name errors with suggestions and related information", async () => {
    const uri = "file:///diag.loss";
    const text = "param c = 0.2\nloss a {\n  l1(q) = (1 - q)^2 + cc\n  l0(q) = q^2\n  l0(q) = q\n}\n";
    await client.open(uri, text);
    const diags = await client.settledDiagnostics(uri);
    const unknown = diags.find((d) => d.code === "unknown-name")!;
    expect(messageOf(unknown)).toContain("did you mean `c`?");
    expect(unknown.range).toEqual({ start: positionOf(text, text.indexOf("cc")), end: positionOf(text, text.indexOf("cc") + 2) });
    expect(unknown.source).toBe("propriety");
    expect(unknown.data).toEqual({ suggestion: "c" });
    const dup = diags.find((d) => d.code === "duplicate-clause")!;
    expect(dup.relatedInformation?.[0]?.message).toBe("first definition");
    expect(dup.relatedInformation?.[0]?.location.range.start).toEqual(positionOf(text, text.indexOf("l0(q) = q^2")));
  });

  it("keeps up with a burst of 150 incremental edits: the final diagnostics match the final text", async () => {
    const uri = "file:///burst.loss";
    let text = "param c = 0.2\nloss a {\n  l1(q) = (1 - q)^2\n  l0(q) = q^2\n}\n";
    await client.open(uri, text);
    const typed = "loss typed(g = 2 in [0, 5]) {\n  l1(q) = -(1 - q)^g * ln(q)\n  l0(q) = -q^g * ln(1 - qq) + cc\n  threshold = 0.3\n  expect strictly propper\n}\n";
    let version = 1;
    let edits = 0;
    for (const ch of typed) {
      const pos = positionOf(text, text.length);
      version = await client.change(uri, [{ range: { start: pos, end: pos }, text: ch }]);
      text += ch;
      edits++;
      // Every tenth keystroke is a typo corrected at once (delete then retype), as people type.
      if (edits % 10 === 0) {
        const p = positionOf(text, text.length);
        await client.change(uri, [{ range: { start: p, end: p }, text: "x" }]);
        const p2 = positionOf(text, text.length);
        version = await client.change(uri, [{ range: { start: p2, end: { line: p2.line, character: p2.character + 1 } }, text: "" }]);
        edits += 2;
      }
    }
    expect(edits).toBeGreaterThanOrEqual(150);
    const diags = await client.settledDiagnostics(uri);
    expect(client.diagnostics.get(uri)!.version).toBe(version);
    const expected = createLanguageService({ maxAnalysedLosses: 200 }).analyseFull(text).issues.map((i) => ({
      code: i.code, message: i.message, range: { start: positionOf(text, i.span.start), end: positionOf(text, i.span.end) },
    }));
    expect(diags.map((d: Diagnostic) => ({ code: d.code, message: d.message, range: d.range }))).toEqual(expected);
    expect(diags.map((d) => d.code)).toEqual(expect.arrayContaining(["unknown-name", "invalid-expect"]));
  });

  it("clears the diagnostics of a closed document", async () => {
    const uri = "file:///closing.loss";
    await client.open(uri, "loss a {\n  l1(q) = zz\n}\n");
    expect((await client.diagnosticsFor(uri)).length).toBeGreaterThan(0);
    await client.close(uri);
    await client.waitFor(() => client.diagnostics.get(uri)?.diagnostics.length === 0, 5000, "cleared diagnostics");
  });
});

describe("features over LSP", () => {
  const uri = "file:///features.loss";
  const text = [
    "# Cost of a false alarm.",
    "param c = 0.2 in [0.01, 0.99]",
    "def sq(x) = x * x",
    "loss brier {",
    "  l1(q) = sq(1 - q) + c * 0",
    "  l0(q) = sq(q)",
    "}",
    "loss entropy {",
    "  bayes(q) = -q*ln(q) - (1 - q)*ln(1 - q)",
    "}",
    "",
  ].join("\n");
  const pos = (marker: string, shift = 0) => positionOf(text, text.indexOf(marker) + shift);

  beforeAll(async () => {
    await client.open(uri, text);
    await client.settledDiagnostics(uri);
  });

  it("hovers a loss, a clause and a built-in", async () => {
    const loss = await client.request<Hover>("textDocument/hover", { ...td(uri), position: pos("brier", 2) });
    expect((loss.contents as { value: string }).value).toContain("**Verdict:**");
    expect(loss.range).toEqual({ start: pos("brier"), end: pos("brier", 5) });
    const clause = await client.request<Hover>("textDocument/hover", { ...td(uri), position: pos("bayes", 1) });
    expect((clause.contents as { value: string }).value).toContain("Savage partials");
    const builtin = await client.request<Hover>("textDocument/hover", { ...td(uri), position: pos("ln(q)", 1) });
    expect((builtin.contents as { value: string }).value).toContain("natural logarithm");
  });

  it("completes clause names with snippets", async () => {
    const items = await client.request<CompletionItem[]>("textDocument/completion", { ...td(uri), position: { line: 8, character: 2 } });
    const weight = items.find((i) => i.label === "weight");
    expect(weight?.insertTextFormat).toBe(2);
    expect(weight?.insertText).toBe("weight(q) = ${1}");
  });

  it("gives signature help", async () => {
    const s = await client.request<{ signatures: { label: string }[] }>("textDocument/signatureHelp", { ...td(uri), position: pos("sq(1 - q)", 3) });
    expect(s.signatures[0]!.label).toBe("sq(x)");
  });

  it("finds definitions and references", async () => {
    const def = await client.request<{ range: unknown }[]>("textDocument/definition", { ...td(uri), position: pos("sq(q)", 1) });
    expect(def).toEqual([{ uri, range: { start: pos("sq(x)"), end: pos("sq(x)", 2) } }]);
    const refs = await client.request<unknown[]>("textDocument/references", { ...td(uri), position: pos("sq(x)"), context: { includeDeclaration: true } });
    expect(refs).toHaveLength(3);
  });

  it("renames, and refuses a keyword with an error response", async () => {
    const prep = await client.request<{ placeholder: string }>("textDocument/prepareRename", { ...td(uri), position: pos("c =") });
    expect(prep.placeholder).toBe("c");
    const edit = await client.request<WorkspaceEdit>("textDocument/rename", { ...td(uri), position: pos("c ="), newName: "cost" });
    const after = applyLspEdits(text, edit.changes![uri]!);
    expect(after).toContain("param cost = 0.2");
    expect(after).toContain("sq(1 - q) + cost * 0");
    await expect(client.request("textDocument/rename", { ...td(uri), position: pos("c ="), newName: "loss" })).rejects.toThrow(/keyword/);
  });

  it("outlines the document", async () => {
    const symbols = await client.request<DocumentSymbol[]>("textDocument/documentSymbol", td(uri));
    expect(symbols.map((s) => s.name)).toEqual(["c", "sq", "brier", "entropy"]);
    expect(symbols[2]!.children!.map((s) => s.name)).toEqual(["l1(q)", "l0(q)"]);
  });

  it("serves semantic tokens, folding ranges and code lenses", async () => {
    const tokens = await client.request<SemanticTokens>("textDocument/semanticTokens/full", td(uri));
    expect(tokens.data.length % 5).toBe(0);
    expect(tokens.data.length / 5).toBeGreaterThan(10);
    const folds = await client.request<{ startLine: number; endLine: number }[]>("textDocument/foldingRange", td(uri));
    expect(folds).toEqual(expect.arrayContaining([{ startLine: 3, endLine: 5, kind: "region" }]));
    const lenses = await client.request<{ command: { title: string; command: string } }[]>("textDocument/codeLens", td(uri));
    expect(lenses).toHaveLength(2);
    expect(lenses[0]!.command.command).toBe("propriety.openCurveViewer");
    expect(lenses[0]!.command.title).not.toMatch(/NaN|undefined/);
  });

  it("answers the loss summary request used by the status bar", async () => {
    const s = await client.request<{ loss: string; text: string } | null>("propriety/lossSummary", { uri, position: pos("l0(q) = sq") });
    expect(s?.loss).toBe("brier");
    expect(s?.text).toMatch(/^brier: /);
  });
});

describe("custom requests shared with the curve viewer and the commands", () => {
  const uri = "file:///custom.loss";
  const text = "loss brier {\n  l1(q) = (1 - q)^2\n  l0(q) = q^2\n}\n";

  beforeAll(async () => {
    await client.open(uri, text);
    await client.settledDiagnostics(uri);
  });

  it("serves sampled curves for the open version", async () => {
    const r = await client.request<{ version: number | null; losses: { loss: string; partials: { y: unknown[] }[] }[] }>("propriety/curves", { uri });
    expect(r.version).toBe(1);
    expect(r.losses.map((l) => l.loss)).toEqual(["brier"]);
    expect(r.losses[0]!.partials.length).toBe(2);
    expect(r.losses[0]!.partials[0]!.y.length).toBeGreaterThan(10);
  });

  it("generates code for a target", async () => {
    const r = await client.request<{ ok: boolean; code: string | null; fileName: string | null }>("propriety/generate", { uri, target: "numpy" });
    expect(r.ok).toBe(true);
    expect(r.code).toContain("brier");
    expect(r.fileName).toMatch(/\.py$/);
    const bad = await client.request<{ ok: boolean; message: string | null }>("propriety/generate", { uri: "file:///not-open.loss", target: "numpy" });
    expect(bad).toEqual({ ok: false, code: null, message: "the document is not open", fileName: null });
  });

  it("renders the HTML report when the report assets are built, and says null otherwise", async () => {
    const { existsSync } = await import("node:fs");
    const { join } = await import("node:path");
    const { ROOT } = await import("../support/lsp-client.js");
    const built = existsSync(join(ROOT, "dist", "report-page.js")) && existsSync(join(ROOT, "dist", "viewer.css"));
    const r = await client.request<{ html: string } | null>("propriety/report", { uri });
    if (built) {
      expect(r?.html).toMatch(/<html/i);
      expect(r?.html).toContain("brier");
    } else {
      expect(r).toBeNull();
    }
  });
});

describe("code actions over LSP", () => {
  it("applies the suggestion fix to the published diagnostic", async () => {
    const uri = "file:///fix.loss";
    const text = "param c = 0.2\nloss a {\n  l1(q) = (1 - q)^2 + cc\n  l0(q) = q^2\n}\n";
    await client.open(uri, text);
    const diags = await client.settledDiagnostics(uri);
    const d = diags.find((x) => x.code === "unknown-name")!;
    const actions = await client.request<CodeAction[]>("textDocument/codeAction", { ...td(uri), range: d.range, context: { diagnostics: [d] } });
    const fix = actions.find((a) => a.title === "Change to `c`")!;
    expect(fix.kind).toBe("quickfix");
    expect(fix.diagnostics?.[0]?.code).toBe("unknown-name");
    expect(applyLspEdits(text, fix.edit!.changes![uri]!)).toBe("param c = 0.2\nloss a {\n  l1(q) = (1 - q)^2 + c\n  l0(q) = q^2\n}\n");
  });

  it("completes a missing partial from the published diagnostic", async () => {
    const uri = "file:///partial.loss";
    const text = "loss a {\n  l1(q) = -ln(q)\n}\n";
    await client.open(uri, text);
    const d = (await client.settledDiagnostics(uri)).find((x) => x.code === "missing-partial")!;
    const actions = await client.request<CodeAction[]>("textDocument/codeAction", { ...td(uri), range: d.range, context: { diagnostics: [d] } });
    const fix = actions.find((a) => a.title.startsWith("Add `l0(q)"))!;
    expect(applyLspEdits(text, fix.edit!.changes![uri]!)).toBe("loss a {\n  l1(q) = -ln(q)\n  l0(q) = -ln(1 - q)\n}\n");
  });
});

describe("journey: is the copied focal loss proper? (samples/flood-desk.loss)", () => {
  const uri = "file:///flood-desk.loss";
  const text = readFileSync(path.join(ROOT, "samples", "flood-desk.loss"), "utf8");
  const at = (marker: string, shift = 0) => positionOf(text, text.indexOf(marker) + shift);

  it("reports the focal loss as improper with a counterexample, hovers the recovery map, and inserts it", async () => {
    await client.open(uri, text);
    const diags = await client.settledDiagnostics(uri);
    // Lin et al. 2017, "Focal Loss for Dense Object Detection" (ICCV): the focal loss is improper for γ > 0.
    const improper = diags.find((d) => d.code === "improper" && d.range.start.line === at("loss focal").line)!;
    expect(improper).toBeDefined();
    expect(messageOf(improper)).toMatch(/at η = [0-9.]+, predicting q = [0-9.]+ has conditional risk/);
    expect(messageOf(improper)).toContain("proper at g = 0");
    const hover = await client.request<Hover>("textDocument/hover", { ...td(uri), position: at("loss focal", 6) });
    const md = (hover.contents as { value: string }).value;
    expect(md).toContain("**Verdict:** improper");
    expect(md).toContain("**posterior recovery**");
    const recovery = diags.find((d) => d.code === "posterior-recovery" && d.range.start.line === at("loss focal").line)!;
    const actions = await client.request<CodeAction[]>("textDocument/codeAction", { ...td(uri), range: recovery.range, context: { diagnostics: [recovery] } });
    const insert = actions.find((a) => a.title.includes("posterior-recovery map of `focal`"))!;
    const after = applyLspEdits(text, insert.edit!.changes![uri]!);
    expect(after).toMatch(/\ndef focal_recovery\(q, g\) = /);
    const version = await client.change(uri, [{ text: after }]);
    const again = await client.diagnosticsFor(uri, version);
    expect(again.filter((d) => d.severity === 1 && d.range.start.line > at("loss focal").line + 5 && /recovery/.test(messageOf(d)))).toEqual([]);
    expect(again.some((d) => d.code === "parse-unexpected-token" || d.code === "unknown-name")).toBe(false);
  });
});

describe("formatting over LSP", () => {
  it("formats a compact document into the canonical layout", async () => {
    const uri = "file:///fmt.loss";
    const text = "loss a{l1(q)=(1-q)^2\nl0(q)=q^2}";
    await client.open(uri, text);
    const edits = await client.request<TextEdit[]>("textDocument/formatting", { ...td(uri), options: { tabSize: 2, insertSpaces: true } });
    expect(applyLspEdits(text, edits)).toBe("loss a {\n  l1(q) = (1 - q)^2\n  l0(q) = q^2\n}\n");
  });

  it("leaves a document with syntax errors alone", async () => {
    const uri = "file:///fmt-broken.loss";
    await client.open(uri, "loss a {\n  l1(q) = (1 - \n");
    expect(await client.request<TextEdit[]>("textDocument/formatting", { ...td(uri), options: { tabSize: 2, insertSpaces: true } })).toEqual([]);
  });
});

describe("settings", () => {
  const two = "loss a {\n  l1(q) = (1 - q)^2\n  l0(q) = q^2\n}\nloss b {\n  l1(q) = -ln(q)\n  l0(q) = -ln(1 - q)\n}\n";

  it("takes settings from initializationOptions", async () => {
    const c = await LspTestClient.start({ initializationOptions: { settings: { maxAnalysedLosses: 1 } } });
    try {
      await c.open("file:///limit.loss", two);
      const diags = await c.settledDiagnostics("file:///limit.loss");
      expect(diags.map(messageOf)).toContain("only the first 1 losses of this file are analysed");
    } finally {
      await c.stop();
    }
  });

  it("rechecks open documents when the configuration changes", async () => {
    const uri = "file:///config.loss";
    await client.open(uri, two);
    expect((await client.settledDiagnostics(uri)).some((d) => messageOf(d).startsWith("only the first"))).toBe(false);
    await client.connection.sendNotification("workspace/didChangeConfiguration", { settings: { propriety: { maxAnalysedLosses: 1 } } });
    await client.waitFor(() => client.diagnostics.get(uri)?.diagnostics.some((d) => messageOf(d).startsWith("only the first 1")) === true, 10_000, "the limit");
    await client.connection.sendNotification("workspace/didChangeConfiguration", { settings: { propriety: { maxAnalysedLosses: 200 } } });
    await client.waitFor(() => client.diagnostics.get(uri)?.diagnostics.some((d) => messageOf(d).startsWith("only the first")) === false, 10_000, "the limit lifted");
  });
});

describe("requests the server cannot answer", () => {
  it("answers empty for an unopened document", async () => {
    const uri = "file:///never-opened.loss";
    const position = { line: 0, character: 0 };
    expect(await client.request("textDocument/hover", { ...td(uri), position })).toBeNull();
    expect(await client.request("textDocument/completion", { ...td(uri), position })).toEqual([]);
    expect(await client.request("textDocument/definition", { ...td(uri), position })).toEqual([]);
    expect(await client.request("textDocument/documentSymbol", td(uri))).toEqual([]);
    expect(await client.request("textDocument/formatting", { ...td(uri), options: { tabSize: 2, insertSpaces: true } })).toEqual([]);
    expect(await client.request("textDocument/codeLens", td(uri))).toEqual([]);
  });

  it("answers empty for positions past the end", async () => {
    const uri = "file:///short.loss";
    await client.open(uri, "loss a {\n  l1(q) = q\n  l0(q) = q\n}\n");
    expect(await client.request("textDocument/hover", { ...td(uri), position: { line: 999, character: 0 } })).toBeNull();
    expect(await client.request("textDocument/hover", { ...td(uri), position: { line: 0, character: 999 } })).toBeNull();
    expect(await client.request("textDocument/completion", { ...td(uri), position: { line: 50, character: 3 } })).toEqual([]);
    expect(await client.request("textDocument/rename", { ...td(uri), position: { line: 99, character: 0 }, newName: "x" })).toBeNull();
    expect(client.exited).toBe(false);
  });
});

describe("a 5 MB document", () => {
  it("is checked without crashing, and the server still answers afterwards", async () => {
    const big = await LspTestClient.start();
    try {
      const uri = "file:///big.loss";
      const parts: string[] = [];
      let size = 0;
      for (let i = 0; size < 5_000_000; i++) {
        const item = i % 50 === 7 ? `loss bad${i} {\n  l1(q) = (1 - q)^2 + zz\n  l0(q) = q^2\n}\n` : `loss x${i} {\n  l1(q) = (1 - q)^2\n  l0(q) = q^2\n}\n`;
        parts.push(item);
        size += item.length;
      }
      const text = parts.join("");
      expect(text.length).toBeGreaterThanOrEqual(5_000_000);
      await big.open(uri, text);
      const diags = await big.diagnosticsFor(uri, 1, 200_000);
      expect(diags.some((d) => d.code === "unknown-name")).toBe(true);
      const hover = await big.request<Hover | null>("textDocument/hover", { ...td(uri), position: { line: 0, character: 6 } });
      expect((hover!.contents as { value: string }).value).toContain("loss `x0`");
      expect(big.exited).toBe(false);
    } finally {
      await big.stop();
    }
  }, 300_000);
});
