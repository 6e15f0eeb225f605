/** Whether Neovim is on PATH (the Neovim tests skip visibly without it; test/tools.test.ts fails in CI). */
import { execFileSync } from "node:child_process";

export function hasNvim(): boolean {
  try {
    execFileSync("nvim", ["--version"], { stdio: "ignore" });
    return true;
  } catch {
    return false;
  }
}
