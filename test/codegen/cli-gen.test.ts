/**
 * `propriety gen` end to end in-process: output to stdout and to files (atomic: nothing half-written on
 * error), exit codes (0 generated, 1 cannot generate, 2 usage or I/O error), and the routing from main().
 */
import * as fs from "node:fs";
import * as path from "node:path";
import { describe, expect, it } from "vitest";
import { runGen } from "../../server/src/cli/gen.js";
import { main, nodeIo, type CliIo } from "../../server/src/cli/main.js";
import { tempDir } from "./support.js";

function captureIo(): CliIo & { out: string; err: string } {
  const io = { ...nodeIo, out: "", err: "" };
  io.stdout = (t: string) => void (io.out += t);
  io.stderr = (t: string) => void (io.err += t);
  return io;
}

const LOSSES = `param alert = 0.2 in [0.05, 0.5]
loss brier {
  l1(q) = (1 - q)^2
  l0(q) = q^2
  threshold = alert
}
loss focal(g = 2 in [0, 5]) {
  l1(q) = -(1 - q)^g * ln(q)
  l0(q) = -q^g * ln(1 - q)
  expect improper
}
loss arcsine {
  weight(q) = (q * (1 - q))^(-0.5)
}
loss cubic {
  l1(q) = (1 - q)^3
  l0(q) = q^3
}
`;

function setup(): { dir: string; file: string } {
  const dir = tempDir("propriety-gen-");
  const file = path.join(dir, "desk.loss");
  fs.writeFileSync(file, LOSSES);
  return { dir, file };
}

describe("propriety gen", () => {
  it("prints one module to stdout and exits 0", () => {
    const { file } = setup();
    const io = captureIo();
    expect(runGen(["--target", "numpy", file, "--loss", "brier"], io)).toBe(0);
    expect(io.out).toMatch(/^def brier\(pred, target, weight=None, reduction="mean"\):/m);
    expect(io.out).toMatch(/^def brier_grad\(/m);
    expect(io.out).toContain("from desk.loss");
  });

  it("writes --out atomically and leaves no temporary file", () => {
    const { dir, file } = setup();
    const out = path.join(dir, "gen", "desk_losses.ts");
    const io = captureIo();
    // Exit 1: a loss of the file could not be generated (listed on stderr); the others are still written.
    expect(runGen(["--target", "ts", "--out", out, file], io)).toBe(1);
    expect(io.err).toMatch(/skipped `arcsine`/);
    expect(fs.readFileSync(out, "utf8")).toContain("export function brier(");
    expect(fs.readdirSync(path.dirname(out))).toEqual(["desk_losses.ts"]);
    // Without --allow-improper the improper loss without `expect improper` is listed, not generated; the
    // focal loss says `expect improper`, which is consent; the weight loss has a reason.
    expect(fs.readFileSync(out, "utf8")).toMatch(/not generated: `cubic`/);
    expect(fs.readFileSync(out, "utf8")).toMatch(/^export function focal\(/m);
    expect(fs.readFileSync(out, "utf8")).toMatch(/not generated: `arcsine`: .*no closed-form integral/);
  });

  it("refuses an improper loss without --allow-improper (exit 1, nothing written)", () => {
    const { dir, file } = setup();
    const out = path.join(dir, "focal.py");
    const io = captureIo();
    expect(runGen(["--target", "torch", "--loss", "cubic", "--out", out, file], io)).toBe(1);
    expect(io.err).toMatch(/improper.*--allow-improper/);
    expect(fs.existsSync(out)).toBe(false);
    expect(runGen(["--target", "torch", "--loss", "focal", "--allow-improper", "--set", "g=1", "--out", out, file], io)).toBe(0);
    const text = fs.readFileSync(out, "utf8");
    expect(text).toMatch(/^# WARNING: improper loss/m);
    expect(text).toContain("g = 1");
    expect(text).toMatch(/^def focal_recover_posterior\(q\):/m);
  });

  it("refuses a weight without an elementary integral with the reason (exit 1)", () => {
    const { file } = setup();
    const io = captureIo();
    expect(runGen(["--target", "jax", "--loss", "arcsine", file], io)).toBe(1);
    expect(io.err).toMatch(/not an integer.*bayes/s);
    expect(io.out).toBe("");
  });

  it("an unknown target, a bad --set, a missing file or a bad --input are usage errors (exit 2)", () => {
    const { file } = setup();
    for (const args of [
      ["--target", "fortran", file],
      ["--target", "numpy", "--set", "g", file],
      ["--target", "numpy", path.join(path.dirname(file), "missing.loss")],
      ["--target", "numpy", "--input", "logits", file],
      ["--target", "numpy"],
      [file],
      ["--target", "numpy", "--bogus", file],
    ]) {
      const io = captureIo();
      expect(runGen(args, io), args.join(" ")).toBe(2);
      expect(io.err.length).toBeGreaterThan(0);
      expect(io.out).toBe("");
    }
    const io = captureIo();
    runGen(["--target", "fortran", file], io);
    expect(io.err).toMatch(/unknown target 'fortran'; the targets are torch, jax, numpy, ts/);
  });

  it("a write failure leaves nothing behind (exit 2)", () => {
    const { dir, file } = setup();
    // The output path is an existing directory, so the final rename fails after the temporary is written.
    const blocked = path.join(dir, "blocked");
    fs.mkdirSync(path.join(blocked, "inner"), { recursive: true });
    const io = captureIo();
    expect(runGen(["--target", "numpy", "--out", blocked, file], io)).toBe(2);
    expect(io.err).toMatch(/cannot write/);
    expect(fs.readdirSync(dir).sort()).toEqual(["blocked", "desk.loss"]);
    expect(fs.readdirSync(blocked)).toEqual(["inner"]);
  });

  it("is reachable as `propriety gen` from main()", async () => {
    const { file } = setup();
    const io = captureIo();
    expect(await main(["gen", "--target", "ts", "--loss", "brier", file], io)).toBe(0);
    expect(io.out).toContain("export function brierGrad(");
    const help = captureIo();
    expect(await main(["gen", "--help"], help)).toBe(0);
    expect(help.out).toMatch(/--target torch\|jax\|numpy\|ts/);
  });
});
