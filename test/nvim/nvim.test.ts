// A second, third-party LSP client: headless Neovim 0.7 drives the bundled server over stdio
// (script: test/nvim/nvim-lsp.lua). Skipped, with a message, when `nvim` is not installed.
import { spawnSync } from "node:child_process";
import { mkdtempSync, rmSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import * as path from "node:path";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { createLanguageService } from "../../server/src/service/language-service.js";
import { ensureServerBuilt, ROOT } from "../support/lsp-client.js";
import { hasNvim } from "./has-nvim.js";

const NVIM = hasNvim();
if (!NVIM) console.warn("SKIPPED test/nvim: `nvim` is not installed (apt-get install neovim; .ci/run installs it)");

// The absolute loss |y − q| is improper: its conditional risk is linear in q, so the minimiser jumps to
// 0 or 1 (Gneiting & Raftery 2007, "Strictly Proper Scoring Rules, Prediction, and Estimation", JASA 102, §3).
// The Brier score is strictly proper (Brier 1950; Gneiting & Raftery 2007, §3).
const SAMPLE = [
  "# Two losses: one improper, one proper.",
  "loss absolute {",
  "  l1(q) = 1 - q",
  "  l0(q) = q",
  "  expect proper",
  "}",
  "",
  "loss brier {",
  "  l1(q) = (1 - q)^2",
  "  l0(q) = q^2 + tpyo",
  "}",
  "",
  "loss brier_ok {",
  "  l1(q) = (1 - q)^2",
  "  l0(q) = q^2",
  "}",
  "",
].join("\n");

describe.skipIf(!NVIM)("neovim as the LSP client", () => {
  let dir = "";
  let stdout = "";
  let status: number | null = null;

  beforeAll(async () => {
    const server = await ensureServerBuilt();
    dir = mkdtempSync(path.join(tmpdir(), "propriety-nvim-"));
    const file = path.join(dir, "sample.loss");
    writeFileSync(file, SAMPLE);
    const hoverLine = SAMPLE.split("\n").indexOf("loss brier_ok {");
    const r = spawnSync("nvim", ["--headless", "-u", "NONE", "-c", `luafile ${path.join(ROOT, "test", "nvim", "nvim-lsp.lua")}`, file], {
      cwd: dir, encoding: "utf8", timeout: 60_000,
      env: { ...process.env, SERVER: server, HOVER_LINE: String(hoverLine), HOVER_COL: "6" },
    });
    stdout = r.stdout ?? "";
    status = r.status;
  }, 120_000);

  afterAll(() => {
    if (dir) rmSync(dir, { recursive: true, force: true });
  });

  it("exits cleanly after the round trip", () => {
    expect(status, stdout).toBe(0);
  });

  it("receives the same diagnostics as the service computes for the file", () => {
    const expected = createLanguageService({ maxAnalysedLosses: 200 }).analyseFull(SAMPLE).issues.map((i) => {
      const before = SAMPLE.slice(0, i.span.start);
      const line = before.split("\n").length;
      const col = i.span.start - before.lastIndexOf("\n");
      return `DIAG ${line}:${col} ${i.code} ${i.message}`;
    }).sort();
    const got = stdout.split("\n").filter((l) => l.startsWith("DIAG ")).sort();
    expect(got).toEqual(expected);
    expect(got.some((l) => l.startsWith("DIAG 10:") && l.includes("unknown-name"))).toBe(true);
  });

  const engineDecides = createLanguageService().analyseFull(SAMPLE).losses[0]?.analysis?.verdict !== "unknown";
  it.skipIf(!engineDecides)("reports the absolute loss as improper", () => {
    expect(stdout).toMatch(/^DIAG [2-6]:\d+ (improper|expect-failed) /m);
  });

  it("shows the hover of the proper loss", () => {
    const hover = stdout.split("\n").find((l) => l.startsWith("HOVER "));
    expect(hover).toBeDefined();
    expect(hover).toContain("**loss `brier_ok`**");
    expect(hover).toContain("**Verdict:**");
    expect(hover).not.toMatch(/NaN|undefined/);
  });
});
