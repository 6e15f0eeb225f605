/**
 * The external tools the suite drives. On a developer's machine a missing tool makes its tests skip,
 * each with a visible reason; in CI (CI=true) a missing tool is a failure here, because a green run that
 * skipped the browser, editor or Python checks would prove nothing. `.ci/run` installs them.
 */
import { execFileSync } from "node:child_process";
import { existsSync } from "node:fs";
import { describe, expect, it } from "vitest";
import { pythonHas } from "./codegen/support.js";
import { torchPython } from "./codegen/torch-python.js";

const inCi = process.env["CI"] === "true";

function runs(cmd: string, args: string[]): boolean {
  try {
    execFileSync(cmd, args, { stdio: "ignore" });
    return true;
  } catch {
    return false;
  }
}

const TOOLS: [string, () => boolean, string][] = [
  ["Chromium (report export, viewer and report pages)", () => existsSync("/usr/bin/chromium"), "apt-get install chromium"],
  ["Neovim (second LSP client)", () => runs("nvim", ["--version"]), "apt-get install neovim"],
  ["NumPy for python3 (generated NumPy code is executed)", () => pythonHas("numpy"), "apt-get install python3-numpy"],
  ["PyTorch for python3 (generated PyTorch code is executed)", () => torchPython() !== null, "apt-get install python3-torch"],
];

describe("external tools", () => {
  it.each(TOOLS)("%s", (name, present, install) => {
    if (present()) return;
    if (!inCi) console.warn(`[skipped checks] ${name} is missing (${install}); its tests skip on this machine.`);
    expect(inCi, `${name} is missing in CI: ${install}`).toBe(false);
  });
});
