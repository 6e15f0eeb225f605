/**
 * Which Python runs the generated PyTorch code: PROPRIETY_TEST_PYTHON when set, otherwise the first of
 * `python3` on PATH and Debian's /usr/bin/python3 that can import torch (Debian's python3-torch installs
 * for /usr/bin/python3 only, while PATH may lead to another interpreter, e.g. a pyenv shim). Null when
 * none can.
 */
import { spawnSync } from "node:child_process";

let cached: string | null | undefined;

export function torchPython(): string | null {
  if (cached !== undefined) return cached;
  const candidates = process.env.PROPRIETY_TEST_PYTHON ? [process.env.PROPRIETY_TEST_PYTHON] : ["python3", "/usr/bin/python3"];
  // Importing torch takes a few seconds: ask once per test file.
  cached = candidates.find((py) => spawnSync(py, ["-c", "import torch, numpy"], { encoding: "utf8" }).status === 0) ?? null;
  return cached;
}
