// The README's Neovim 0.7 set-up, exactly as written (the only change: /path/to/propriety becomes this
// checkout), used as init.lua of a headless Neovim that opens a .loss file: the file type is detected, the
// server attaches, diagnostics arrive, and a code lens runs the server's command and shows the loss
// summary. Skipped, with a message, when `nvim` is not installed (.ci/run installs it).
import { spawnSync } from "node:child_process";
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import * as path from "node:path";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { ensureServerBuilt, ROOT } from "../support/lsp-client.js";
import { hasNvim } from "./has-nvim.js";

const NVIM = hasNvim();
if (!NVIM) console.warn("SKIPPED test/nvim/readme-snippet: `nvim` is not installed (apt-get install neovim; .ci/run installs it)");

/** The ```lua block of README.md that follows "For Neovim 0.7". */
export function readmeSnippet(readme: string): string {
  const at = readme.indexOf("For Neovim 0.7");
  if (at < 0) throw new Error("README.md has no 'For Neovim 0.7' paragraph");
  const m = /```lua\n([\s\S]*?)```/.exec(readme.slice(at));
  if (!m) throw new Error("no ```lua block after 'For Neovim 0.7' in README.md");
  return m[1]!;
}

// The Brier score (Brier 1950) is strictly proper; the absolute loss |y − q| is improper (its conditional
// risk is linear in q; Gneiting & Raftery 2007, JASA 102, §3).
const SAMPLE = "loss brier {\n  l1(q) = (1 - q)^2\n  l0(q) = q^2\n}\n\nloss absolute {\n  l1(q) = 1 - q\n  l0(q) = q\n}\n";

describe.skipIf(!NVIM)("the README's Neovim 0.7 snippet", () => {
  let dir = "";
  let stdout = "";
  let status: number | null = null;
  let snippet = "";

  beforeAll(async () => {
    await ensureServerBuilt();
    snippet = readmeSnippet(readFileSync(path.join(ROOT, "README.md"), "utf8"));
    dir = mkdtempSync(path.join(tmpdir(), "propriety-nvim-readme-"));
    const init = path.join(dir, "init.lua");
    writeFileSync(init, snippet.replaceAll("/path/to/propriety", ROOT));
    const file = path.join(dir, "two.loss");
    writeFileSync(file, SAMPLE);
    // -u init.lua: the README's text is the whole configuration (filetype detection runs after it, as in a user's start-up).
    const r = spawnSync("nvim", ["--headless", "-u", init, "-i", "NONE", file, "-c", `luafile ${path.join(ROOT, "test", "nvim", "readme-snippet.lua")}`], {
      cwd: dir, encoding: "utf8", timeout: 90_000, env: { ...process.env, XDG_CONFIG_HOME: dir, XDG_DATA_HOME: dir, XDG_STATE_HOME: dir },
    });
    stdout = `${r.stdout ?? ""}${r.stderr ?? ""}`;
    status = r.status;
  }, 150_000);

  afterAll(() => {
    if (dir) rmSync(dir, { recursive: true, force: true });
  });

  it("is the 0.7 form: turns on Lua filetype detection before vim.filetype.add", () => {
    expect(snippet).toMatch(/^vim\.g\.do_filetype_lua = 1\n/);
    expect(snippet.indexOf("vim.filetype.add")).toBeGreaterThan(snippet.indexOf("do_filetype_lua"));
  });

  it("detects .loss files, attaches the server and receives diagnostics", () => {
    expect(status, stdout).toBe(0);
    expect(stdout).toContain("FILETYPE loss\n");
    expect(stdout).toContain("CLIENTS 1\n");
    expect(stdout).toMatch(/^DIAGS [1-9]\d*$/m);
  });

  it("shows a lens per loss that runs the server's command, which shows the summary", () => {
    const lenses = stdout.split("\n").filter((l) => l.startsWith("LENS "));
    expect(lenses).toHaveLength(2);
    for (const l of lenses) expect(l).toMatch(/^LENS propriety\.showLossSummary \| /);
    expect(lenses[1]).toMatch(/improper/);
    expect(stdout).toMatch(/^NOTIFY brier: strictly proper · λ = 2 · δ ≈ 0\.25·ε² · exponents ½ \/ ½$/m);
  });
});
