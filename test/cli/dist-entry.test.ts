/**
 * The bundle dist/cli.js run directly (`node dist/cli.js check FILE`, as a CI step might be written)
 * runs the command line with the same output and exit codes as bin/propriety.js; it used to define
 * `main` and exit 0 silently whatever the file. Needs the bundle (`node scripts/build.mjs`).
 */
import { spawnSync } from "node:child_process";
import * as fs from "node:fs";
import * as os from "node:os";
import * as path from "node:path";
import { fileURLToPath } from "node:url";
import { describe, expect, it } from "vitest";

const root = path.resolve(path.dirname(fileURLToPath(import.meta.url)), "..", "..");
const cli = path.join(root, "dist", "cli.js");
const bin = path.join(root, "bin", "propriety.js");

/** Log loss with the y = 0 branch doubled: improper (Reid & Williamson 2010, Thm 1: proper iff −l1'/(1−q) = l0'/q; here the two sides differ by a factor 2). */
const IMPROPER = "loss tilted_log {\n  l1(q) = -ln(q)\n  l0(q) = -2*ln(1 - q)\n}\n";
/** The Brier score (Brier 1950), strictly proper. */
const PROPER = "loss brier {\n  l1(q) = (1 - q)^2\n  l0(q) = q^2\n}\n";

function run(entry: string, args: string[]) {
  if (!fs.existsSync(entry)) throw new Error(`${entry} is missing: run \`node scripts/build.mjs\` first`);
  return spawnSync(process.execPath, [entry, ...args], { encoding: "utf8", timeout: 60_000 });
}

describe("node dist/cli.js run directly", () => {
  const dir = fs.mkdtempSync(path.join(os.tmpdir(), "propriety-dist-entry-"));
  const improper = path.join(dir, "improper.loss");
  const proper = path.join(dir, "proper.loss");
  fs.writeFileSync(improper, IMPROPER);
  fs.writeFileSync(proper, PROPER);

  it("fails with exit 1 and the improper verdict on an improper loss", () => {
    const r = run(cli, ["check", improper]);
    expect(r.status).toBe(1);
    expect(r.stdout).toMatch(/improper\.loss:1:6: error improper: Not proper/);
  });

  it("exits 0 on a proper loss and 2 on a usage error, like bin/propriety.js", () => {
    for (const args of [["check", proper], ["frobnicate"], ["check", improper]]) {
      const a = run(cli, args);
      const b = run(bin, args);
      expect({ status: a.status, stdout: a.stdout }).toEqual({ status: b.status, stdout: b.stdout });
    }
    expect(run(cli, ["check", proper]).status).toBe(0);
    expect(run(cli, ["frobnicate"]).status).toBe(2);
  });

  it("still only exports when required as a module", () => {
    const r = spawnSync(process.execPath, ["-e", `const m = require(${JSON.stringify(cli)}); console.log(typeof m.main)`], { encoding: "utf8" });
    expect(r.status).toBe(0);
    expect(r.stdout.trim()).toBe("function");
  });
});
