/**
 * `propriety gen` on files and directories: one module per `.loss` file into --out-dir, losses that
 * cannot be generated listed on stderr with a non-zero exit, --check for CI, and the output paths it
 * refuses (a directory, a symbolic link, the source file itself) with nothing written on failure.
 */
import * as fs from "node:fs";
import * as path from "node:path";
import { describe, expect, it } from "vitest";
import { runGen } from "../../server/src/cli/gen.js";
import { nodeIo, type CliIo } from "../../server/src/cli/main.js";
import { tempDir } from "./support.js";

function captureIo(): CliIo & { out: string; err: string } {
  const io = { ...nodeIo, out: "", err: "" };
  io.stdout = (t: string) => void (io.out += t);
  io.stderr = (t: string) => void (io.err += t);
  return io;
}

/** Log loss on probabilities (no link: not generatable for score input) and the logistic margin loss (generatable for both). */
const DESK = `loss log_loss {
  l1(q) = -ln(q)
  l0(q) = -ln(1 - q)
}
loss logistic {
  margin(v) = ln(1 + exp(-v))
}
`;
const BRIER = `loss brier {
  l1(q) = (1 - q)^2
  l0(q) = q^2
}
`;

function setup(): { dir: string; src: string; desk: string; brier: string } {
  const dir = tempDir("propriety-genfiles-");
  const src = path.join(dir, "specs");
  fs.mkdirSync(src);
  const desk = path.join(src, "desk.loss");
  const brier = path.join(src, "brier.loss");
  fs.writeFileSync(desk, DESK);
  fs.writeFileSync(brier, BRIER);
  fs.writeFileSync(path.join(src, "notes.txt"), "not a loss file");
  return { dir, src, desk, brier };
}

describe("propriety gen on files and directories", () => {
  it("a directory gives one module per .loss file in --out-dir (exit 0)", () => {
    const { dir, src } = setup();
    const outDir = path.join(dir, "gen");
    const io = captureIo();
    expect(runGen(["--target", "numpy", "--out-dir", outDir, src], io), io.err).toBe(0);
    expect(fs.readdirSync(outDir).sort()).toEqual(["brier_numpy.py", "desk_numpy.py"]);
    expect(fs.readFileSync(path.join(outDir, "desk_numpy.py"), "utf8")).toMatch(/^def logistic\(/m);
    expect(fs.readFileSync(path.join(outDir, "brier_numpy.py"), "utf8")).toMatch(/^def brier\(/m);
    expect(io.out).toBe("");
  });

  it("several files take --out-dir; without it (or with --out) it is a usage error (exit 2)", () => {
    const { dir, desk, brier, src } = setup();
    for (const args of [["--target", "ts", desk, brier], ["--target", "ts", "--out", path.join(dir, "x.ts"), src], ["--target", "ts", "--loss", "brier", "--out-dir", dir, desk, brier]]) {
      const io = captureIo();
      expect(runGen(args, io), args.join(" ")).toBe(2);
      expect(io.err).toMatch(/--out-dir|--loss takes one input file/);
    }
    const io = captureIo();
    expect(runGen(["--target", "ts", "--out-dir", path.join(dir, "gen"), desk, brier], io)).toBe(0);
    expect(fs.readdirSync(path.join(dir, "gen")).sort()).toEqual(["brier_ts.ts", "desk_ts.ts"]);
  });

  it("a loss that cannot be generated is listed on stderr with its reason, the others are written, exit 1", () => {
    const { dir, desk } = setup();
    const out = path.join(dir, "desk_score.py");
    const io = captureIo();
    expect(runGen(["--target", "torch", "--input", "score", "--out", out, desk], io)).toBe(1);
    expect(io.err).toMatch(/desk\.loss: skipped `log_loss`: score input needs a link/);
    const text = fs.readFileSync(out, "utf8");
    expect(text).toMatch(/^def logistic\(/m);
    expect(text).toMatch(/not generated: `log_loss`/);
  });

  it("--check: exit 0 when up to date, 1 when an output differs or is missing, and nothing is written", () => {
    const { dir, src } = setup();
    const outDir = path.join(dir, "gen");
    expect(runGen(["--target", "jax", "--out-dir", outDir, src], captureIo())).toBe(0);
    const ok = captureIo();
    expect(runGen(["--target", "jax", "--check", "--out-dir", outDir, src], ok), ok.err).toBe(0);
    expect(ok.err).toMatch(/up to date: .*brier_jax\.py/);
    const brierOut = path.join(outDir, "brier_jax.py");
    fs.appendFileSync(brierOut, "# edited by hand\n");
    fs.rmSync(path.join(outDir, "desk_jax.py"));
    const bad = captureIo();
    expect(runGen(["--target", "jax", "--check", "--out-dir", outDir, src], bad)).toBe(1);
    expect(bad.err).toMatch(/brier_jax\.py: out of date/);
    expect(bad.err).toMatch(/desk_jax\.py: missing/);
    expect(fs.readFileSync(brierOut, "utf8")).toMatch(/# edited by hand\n$/);
    expect(fs.existsSync(path.join(outDir, "desk_jax.py"))).toBe(false);
    const usage = captureIo();
    expect(runGen(["--target", "jax", "--check", src], usage)).toBe(2);
    expect(usage.err).toMatch(/--check compares with existing files/);
  });

  it("refuses an output that is a directory, a symbolic link or the source file itself (exit 2, nothing changed)", () => {
    const { dir, desk } = setup();
    const cases: { out: string; why: RegExp }[] = [];
    const asDir = path.join(dir, "adir");
    fs.mkdirSync(asDir);
    cases.push({ out: asDir, why: /cannot write .*adir: it is a directory/ });
    const victim = path.join(dir, "victim.txt");
    fs.writeFileSync(victim, "keep me");
    const link = path.join(dir, "link.py");
    fs.symlinkSync(victim, link);
    cases.push({ out: link, why: /cannot write .*link\.py: it is a symbolic link/ });
    cases.push({ out: desk, why: /cannot write .*desk\.loss: it is the input/ });
    for (const c of cases) {
      const io = captureIo();
      expect(runGen(["--target", "numpy", "--out", c.out, desk], io), c.out).toBe(2);
      expect(io.err).toMatch(c.why);
    }
    expect(fs.readFileSync(victim, "utf8")).toBe("keep me");
    expect(fs.readFileSync(desk, "utf8")).toBe(DESK);
    expect(fs.readdirSync(asDir)).toEqual([]);
  });

  it("a failed write leaves no partial file (exit 2)", () => {
    const { dir, src } = setup();
    // The --out-dir lies under a regular file, so creating it fails before anything is written.
    const blocker = path.join(dir, "blocker");
    fs.writeFileSync(blocker, "");
    const io = captureIo();
    expect(runGen(["--target", "numpy", "--out-dir", path.join(blocker, "gen"), src], io)).toBe(2);
    expect(io.err).toMatch(/cannot write/);
    expect(fs.readdirSync(dir).sort()).toEqual(["blocker", "specs"]);
    expect(fs.readdirSync(src).sort()).toEqual(["brier.loss", "desk.loss", "notes.txt"]);
  });
});
