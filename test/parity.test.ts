/**
 * Parity: the editor and the command line give the same answers, because both read one pipeline.
 * For every sample and the parity fixtures, with the default settings and with non-default ones
 * (threshold 0.2, grid 401), the CLI's `check --json` and the language service (as the LSP scheduler
 * drives it, converted to LSP diagnostics as the server publishes them) give identical diagnostics —
 * codes, severities, ranges, messages — and identical figures; over a real LSP connection the published
 * diagnostics, the `propriety/curves` request and the `propriety/report` request use the same
 * threshold as the CLI. Agreement between surfaces is the assertion here; the values themselves are
 * checked against published ones in test/analysis.
 */
import { readFileSync, readdirSync } from "node:fs";
import * as path from "node:path";
import { TextDocument } from "vscode-languageserver-textdocument";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { main, type CliIo } from "../server/src/cli/main.js";
import { toDiagnostic } from "../server/src/lsp/convert.js";
import type { CurvesResult } from "../server/src/protocol.js";
import type { JsonFile } from "../server/src/products/check-report.js";
import { createLanguageService } from "../server/src/service/language-service.js";
import { toClientShape, DEFAULT_SETTINGS, type AnalysisSettings } from "../server/src/settings.js";
import { LspTestClient } from "./support/lsp-client.js";

const FILES = [
  ...readdirSync("samples").filter((f) => f.endsWith(".loss")).sort().map((f) => path.join("samples", f)),
  ...readdirSync("test/fixtures/parity").filter((f) => f.endsWith(".loss")).sort().map((f) => path.join("test/fixtures/parity", f)),
];

const CONFIGS: { name: string; settings: Partial<AnalysisSettings>; flags: string[] }[] = [
  { name: "default settings", settings: {}, flags: [] },
  { name: "threshold 0.2, grid 401", settings: { defaultThreshold: 0.2, gridResolution: 401 }, flags: ["--threshold", "0.2", "--grid", "401"] },
];

/** Reads the real files, captures the output. */
function captureIo(): CliIo & { out: string; err: string } {
  const io = {
    out: "",
    err: "",
    stdout(t: string) { io.out += t; },
    stderr(t: string) { io.err += t; },
    readFile: (p: string) => readFileSync(p, "utf8"),
    writeFile: () => { throw new Error("check writes nothing"); },
    isDirectory: () => false,
    exists: () => true,
    listDir: () => [],
  };
  return io;
}

async function cliJson(file: string, flags: string[]): Promise<JsonFile> {
  const io = captureIo();
  const code = await main(["check", "--json", ...flags, file], io);
  expect(code, io.err).toBeLessThan(2);
  return (JSON.parse(io.out) as { files: JsonFile[] }).files[0]!;
}

/** The diagnostics as compared: everything the user sees of one. */
const shape = (d: { code?: unknown; severity?: unknown; message: unknown; range: unknown }) => ({ code: d.code, severity: d.severity, message: d.message, range: d.range });
const SEVERITY: Record<string, number> = { error: 1, warning: 2, information: 3, hint: 4 };

describe.each(CONFIGS)("CLI and language service agree ($name)", ({ settings, flags }) => {
  const service = createLanguageService(settings);
  it.each(FILES.map((f) => [f]))("%s", async (file) => {
    const text = readFileSync(file, "utf8");
    const cli = await cliJson(file, flags);
    // The scheduler's path: one loss at a time, then the full document.
    const doc = (await service.analyseIncrementally(text, () => false, () => Promise.resolve()))!;
    const td = TextDocument.create(`file:///${path.basename(file)}`, "loss", 1, text);
    const editor = doc.issues.map((i) => toDiagnostic(td, i, true));
    expect(editor.map(shape)).toEqual(cli.diagnostics.map((d) => ({ ...shape(d), severity: SEVERITY[d.severity] })));
    // Figures: every loss's verdict, evidence, λ, modulus, exponents and threshold.
    const figures = doc.losses.map((l) => ({
      name: l.info.name,
      verdict: l.analysis?.verdict ?? "unknown",
      counterexample: l.analysis?.counterexample ?? null,
      flatInterval: l.analysis?.flatInterval ?? null,
      lambda: l.analysis?.lambda ?? null,
      modulus: l.analysis?.modulus ?? null,
      exponents: l.analysis?.exponents ?? { viaModulus: null, direct: null },
    }));
    expect(figures).toEqual(cli.losses.map((l) => ({ name: l.name, verdict: l.verdict, counterexample: l.counterexample, flatInterval: l.flatInterval, lambda: l.lambda, modulus: l.modulus, exponents: l.exponents })));
    for (const l of doc.losses) {
      const c = cli.losses.find((x) => x.name === l.info.name)!;
      if (l.analysis) expect(l.analysis.threshold).toBe(c.threshold);
    }
  });
});

describe("the threshold setting reaches every surface", () => {
  const file = "test/fixtures/parity/edges.loss";
  const text = readFileSync(file, "utf8");
  const threshold = (j: JsonFile, loss: string) => j.losses.find((l) => l.name === loss)!.threshold;

  it("the CLI: losses without a threshold clause take --threshold; a clause wins", async () => {
    const plain = await cliJson(file, []);
    const moved = await cliJson(file, ["--threshold", "0.2"]);
    expect(threshold(plain, "notch")).toBe(DEFAULT_SETTINGS.defaultThreshold);
    expect(threshold(moved, "notch")).toBe(0.2);
    expect(threshold(moved, "pinned")).toBe(0.3);
    // The direct exponent of `notch` depends on w(c): w(1/2) = 0 but w(0.2) > 0, so the answers differ.
    const direct = (j: JsonFile) => j.losses.find((l) => l.name === "notch")!.exponents.direct;
    expect(direct(moved)).not.toEqual(direct(plain));
  });

  it("the language service: hover, code lens and diagnostics follow the setting", () => {
    const service = createLanguageService();
    const offset = text.indexOf("loss notch") + 6;
    const before = { hover: service.hover(text, offset)?.markdown, lenses: service.codeLenses(text), issues: service.analyseFull(text).issues.map((i) => i.message) };
    service.configure({ defaultThreshold: 0.2 });
    const after = { hover: service.hover(text, offset)?.markdown, lenses: service.codeLenses(text), issues: service.analyseFull(text).issues.map((i) => i.message) };
    expect(after.hover).toMatch(/threshold c = 0\.2/);
    expect(before.hover).not.toMatch(/threshold c = 0\.2/);
    expect(after.lenses.find((l) => l.loss === "notch")!.title).not.toEqual(before.lenses.find((l) => l.loss === "notch")!.title);
    expect(after.issues).not.toEqual(before.issues);
  });
});

describe("over a real LSP connection (non-default settings)", () => {
  let client: LspTestClient;
  const settings = { ...DEFAULT_SETTINGS, defaultThreshold: 0.2, gridResolution: 401 };
  beforeAll(async () => {
    client = await LspTestClient.start({ initializationOptions: { settings: toClientShape(settings) } });
  }, 60_000);
  afterAll(async () => {
    await client?.stop();
  });

  it.each(FILES.map((f) => [f]))("%s: published diagnostics, curves and report use the CLI's answers", async (file) => {
    const text = readFileSync(file, "utf8");
    const uri = `file:///parity/${path.basename(file)}`;
    await client.open(uri, text);
    const published = await client.settledDiagnostics(uri, 120_000);
    const cli = await cliJson(file, ["--threshold", "0.2", "--grid", "401"]);
    expect(published.map(shape)).toEqual(cli.diagnostics.map((d) => ({ ...shape(d), severity: SEVERITY[d.severity] })));
    const curves = await client.request<CurvesResult>("propriety/curves", { uri, points: 21, etas: [0.5] });
    for (const c of curves.losses) expect(c.threshold, c.loss).toBe(cli.losses.find((l) => l.name === c.loss)!.threshold);
    // The report embeds the curves it draws (and its tables print) as JSON: same thresholds again.
    const report = await client.request<{ html: string } | null>("propriety/report", { uri });
    expect(report, "the report needs dist/report-page.js (npm run build)").not.toBeNull();
    const embedded = /<script type="application\/json" id="report-data"[^>]*>([\s\S]*?)<\/script>/.exec(report!.html)?.[1];
    const data = JSON.parse(embedded!) as { files: { curves: CurvesResult }[] };
    const drawn = data.files[0]!.curves.losses;
    expect(drawn.map((c) => c.loss)).toEqual(curves.losses.map((c) => c.loss));
    for (const c of drawn) expect(c.threshold, c.loss).toBe(cli.losses.find((l) => l.name === c.loss)!.threshold);
    await client.close(uri);
  }, 240_000);
});
