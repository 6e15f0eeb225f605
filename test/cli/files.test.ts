/**
 * The command line and the file system: links, FIFOs, devices, link cycles, oversized files and outputs
 * that would overwrite a specification. Each case is a reproduction on a real temporary directory: the
 * walk must not hang, abort or read a device; `report --out` must refuse inputs, `.loss` names, links and
 * directories, and write atomically.
 */
import { execFileSync } from "node:child_process";
import * as fs from "node:fs";
import * as os from "node:os";
import * as path from "node:path";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { main, nodeIo, type CliIo } from "../../server/src/cli/main.js";
import { MAX_SOURCE_BYTES } from "../../server/src/cli/io.js";
import { runReport } from "../../server/src/cli/report.js";

const BRIER = "loss brier {\n  l1(q) = (1 - q)^2\n  l0(q) = q^2\n}\n";

function capture(): CliIo & { out: string; err: string } {
  const io = { ...nodeIo, out: "", err: "" } as CliIo & { out: string; err: string };
  io.stdout = (t) => void (io.out += t);
  io.stderr = (t) => void (io.err += t);
  return io;
}

let dir: string;
beforeAll(() => {
  dir = fs.mkdtempSync(path.join(os.tmpdir(), "propriety-files-"));
  fs.mkdirSync(path.join(dir, "specs", "nested"), { recursive: true });
  fs.writeFileSync(path.join(dir, "specs", "brier.loss"), BRIER);
  fs.writeFileSync(path.join(dir, "specs", "nested", "more.loss"), BRIER.replace("brier", "more"));
  // A link cycle: specs/nested/loop → specs.
  fs.symlinkSync(path.join(dir, "specs"), path.join(dir, "specs", "nested", "loop"));
  // A *.loss link to an endless device, and a FIFO named *.loss.
  fs.symlinkSync("/dev/zero", path.join(dir, "specs", "zero.loss"));
  execFileSync("mkfifo", [path.join(dir, "specs", "pipe.loss")]);
  // A dangling link.
  fs.symlinkSync(path.join(dir, "nowhere.loss"), path.join(dir, "specs", "dangling.loss"));
});
afterAll(() => {
  fs.rmSync(dir, { recursive: true, force: true });
});

describe("reading", () => {
  it("walks a directory with a link cycle, a /dev/zero link, a FIFO and a dangling link: checks the real files, warns about the rest", async () => {
    const io = capture();
    const code = await main(["check", "--json", path.join(dir, "specs")], io);
    expect(code).toBe(0);
    const files = (JSON.parse(io.out) as { files: { file: string }[] }).files.map((f) => path.relative(dir, f.file));
    expect(files).toEqual([path.join("specs", "brier.loss"), path.join("specs", "nested", "more.loss")]);
    expect(io.err).toMatch(/skipping .*loop: a symbolic link to a directory \(not followed\)/);
    expect(io.err).toMatch(/skipping .*zero\.loss: not a regular file/);
    expect(io.err).toMatch(/skipping .*pipe\.loss: not a regular file/);
    expect(io.err).toMatch(/skipping .*dangling\.loss: not a regular file/);
  });

  it.each([["zero.loss"], ["pipe.loss"]])("refuses %s given explicitly (exit 2, nothing read)", async (name) => {
    const io = capture();
    expect(await main(["check", path.join(dir, "specs", name)], io)).toBe(2);
    expect(io.err).toMatch(/is not a regular file or a directory/);
  });

  it("refuses a file larger than MAX_SOURCE_BYTES before reading it", async () => {
    const big = path.join(dir, "big.loss");
    fs.writeFileSync(big, "#".repeat(MAX_SOURCE_BYTES + 1));
    const io = capture();
    expect(await main(["check", big], io)).toBe(2);
    expect(io.err).toMatch(/more than the 4194304 a \.loss file may have/);
  });
});

describe("report --out", () => {
  const assets = () => {
    const a = path.join(dir, "assets");
    fs.mkdirSync(a, { recursive: true });
    fs.writeFileSync(path.join(a, "report-page.js"), "document.body.dataset.ready = '1';");
    fs.writeFileSync(path.join(a, "viewer.css"), "body{}");
    return { assetsDir: a, now: () => new Date("2026-12-02T00:00:00Z") };
  };
  const input = () => path.join(dir, "specs", "brier.loss");

  it.each([
    ["the input itself", () => input(), /is the input/],
    ["a name ending in .loss", () => path.join(dir, "out.loss"), /ends in \.loss/],
    ["a directory", () => path.join(dir, "specs"), /is a directory/],
    ["a symbolic link", () => {
      const link = path.join(dir, "link.html");
      if (!fs.existsSync(link)) fs.symlinkSync(path.join(dir, "target.html"), link);
      return link;
    }, /is a symbolic link/],
  ] as const)("refuses %s (exit 2; the specification is untouched)", async (_n, out, why) => {
    const io = capture();
    expect(await main(["report", input(), "--out", out()], io)).toBe(2);
    expect(io.err).toMatch(why);
    expect(fs.readFileSync(input(), "utf8")).toBe(BRIER);
    expect(fs.existsSync(path.join(dir, "target.html"))).toBe(false);
  });

  it("allows a .loss name with --force, and writes atomically: complete content, no temporary left", async () => {
    const out = path.join(dir, "forced.loss");
    const io = capture();
    expect(await runReport([input(), "--out", out, "--force"], io, assets())).toBe(0);
    expect(fs.readFileSync(out, "utf8")).toMatch(/^<!doctype html>[\s\S]*<\/html>\s*$/i);
    expect(fs.readdirSync(dir).filter((f) => f.endsWith(".tmp"))).toEqual([]);
  });
});

describe("gen --out", () => {
  it("refuses a .loss name without --force and writes it with --force; never the input", async () => {
    const input = path.join(dir, "specs", "brier.loss");
    const out = path.join(dir, "generated.loss");
    const refused = capture();
    expect(await main(["gen", "--target", "ts", input, "--out", out], refused)).toBe(2);
    expect(refused.err).toMatch(/ends in \.loss/);
    expect(fs.existsSync(out)).toBe(false);
    expect(await main(["gen", "--target", "ts", input, "--out", out, "--force"], capture())).toBe(0);
    expect(fs.readFileSync(out, "utf8")).toMatch(/export function brier/);
    const self = capture();
    expect(await main(["gen", "--target", "ts", input, "--out", input, "--force"], self)).toBe(2);
    expect(fs.readFileSync(input, "utf8")).toBe(BRIER);
  });
});
