/**
 * `propriety check` in-process: `main(argv, io)` with an in-memory file system, plus one run on the
 * repository's samples/ through the real file system. The contract is the "Command line" section of
 * test/reference/notation.md: text lines `path:line:col: severity code: message` (1-based), the `--json` object (0-based
 * LSP ranges), a SARIF 2.1.0 log, and exit codes 0 / 1 / 2. The numeric engine is being completed in
 * parallel, so nothing here depends on a verdict's value, only on the shape of what is reported.
 */
import * as fs from "node:fs";
import * as path from "node:path";
import { fileURLToPath } from "node:url";
import { describe, expect, it } from "vitest";
import { main, nodeIo, type CliIo } from "../../server/src/cli/main.js";

/** An in-memory CliIo: files by path (POSIX separators); directories are the prefixes of file paths. */
class MemoryIo implements CliIo {
  out = "";
  err = "";
  readonly written = new Map<string, string>();
  constructor(private readonly files: Record<string, string>, private readonly unreadable: string[] = []) {}

  stdout(text: string): void {
    this.out += text;
  }
  stderr(text: string): void {
    this.err += text;
  }
  readFile(p: string): string {
    const key = norm(p);
    if (this.unreadable.includes(key)) throw new Error("permission denied");
    const t = this.files[key];
    if (t === undefined) throw new Error(`ENOENT: ${p}`);
    return t;
  }
  writeFile(p: string, text: string): void {
    this.written.set(norm(p), text);
  }
  isDirectory(p: string): boolean {
    const key = norm(p);
    return Object.keys(this.files).some((f) => f.startsWith(key + "/"));
  }
  exists(p: string): boolean {
    const key = norm(p);
    return Object.prototype.hasOwnProperty.call(this.files, key) || this.isDirectory(key);
  }
  listDir(p: string): string[] {
    const prefix = norm(p) + "/";
    const names = new Set<string>();
    for (const f of Object.keys(this.files)) if (f.startsWith(prefix)) names.add(f.slice(prefix.length).split("/")[0]!);
    return [...names];
  }
}

function norm(p: string): string {
  return p.replace(/\\/g, "/").replace(/\/+$/, "");
}

async function run(argv: string[], files: Record<string, string>, unreadable: string[] = []): Promise<{ code: number; io: MemoryIo }> {
  const io = new MemoryIo(files, unreadable);
  const code = await main(argv, io);
  return { code, io };
}

/**
 * A file with clean losses only. The Brier score is strictly proper, and so is any positive multiple of it
 * (Gneiting & Raftery 2007, "Strictly Proper Scoring Rules, Prediction, and Estimation", JASA 102(477);
 * test/reference/proper-losses.md, rows L3–L5), so no checker may report an error for it.
 */
const CLEAN = `# Brier scores.
loss brier {
  l1(q) = (1 - q)^2
  l0(q) = q^2
}
loss scaled(s = 2 in [1, 3]) {
  l1(q) = s * (1 - q)^2
  l0(q) = s * q^2
}
`;

/** Several seeded mistakes, one per loss, so that every loss has an error and none reaches the engine. */
const MISTAKES = `param c = 0.2 in [0.01, 0.99]

loss typo {
  l1(q) = (1 - q)^2 + cc
  l0(q) = q^2
}
loss scale {
  l1(q) = softplus(-v)
  l0(q) = q^2
}
loss half {
  l1(q) = -ln(q)
}
loss range(g = 7 in [0, 5]) {
  l1(q) = (1 - q)^g
  l0(q) = q^g
  weigth(q) = 1
}
loss call {
  l1(q) = lgo(q)
  l0(q) = min(q)
}
`;

/** The 1-based line and column of the n-th occurrence of `needle` on the line containing `lineMarker`. */
function at(text: string, lineMarker: string, needle: string): string {
  const lines = text.split("\n");
  const i = lines.findIndex((l) => l.includes(lineMarker));
  if (i < 0) throw new Error(`no line with ${lineMarker}`);
  const col = lines[i]!.indexOf(needle);
  if (col < 0) throw new Error(`no ${needle} on line ${i + 1}`);
  return `${i + 1}:${col + 1}`;
}

const TEXT_LINE = /^(.+):(\d+):(\d+): (error|warning|information|hint) ([a-z0-9-]+): (.+)$/;

describe("text output", () => {
  it("reports each seeded mistake at its 1-based line and column", async () => {
    const { code, io } = await run(["check", "bad.loss"], { "bad.loss": MISTAKES });
    expect(code).toBe(1);
    const lines = io.out.trimEnd().split("\n");
    for (const l of lines) expect(l).toMatch(TEXT_LINE);
    const got = lines.map((l) => {
      const m = TEXT_LINE.exec(l)!;
      return `${m[1]}:${m[2]}:${m[3]} ${m[4]} ${m[5]}`;
    });
    expect(got).toEqual([
      `bad.loss:${at(MISTAKES, "+ cc", "cc")} error unknown-name`,
      `bad.loss:${at(MISTAKES, "softplus(-v)", "v)")} error wrong-variable`,
      `bad.loss:${at(MISTAKES, "-ln(q)", "l1")} error missing-partial`,
      `bad.loss:${at(MISTAKES, "loss range", "7")} error default-out-of-range`,
      `bad.loss:${at(MISTAKES, "weigth", "weigth")} error unknown-clause`,
      `bad.loss:${at(MISTAKES, "lgo(q)", "lgo")} error unknown-function`,
      `bad.loss:${at(MISTAKES, "min(q)", "min")} error wrong-arity`,
    ]);
    // The first position written out, to pin the 1-based convention itself: line 4, column 23.
    expect(got[0]).toBe("bad.loss:4:23 error unknown-name");
    expect(lines[0]).toBe("bad.loss:4:23: error unknown-name: unknown name `cc`; did you mean `c`?");
    expect(io.err).toBe("1 file, 5 losses: 7 errors, 0 warnings\n");
  });

  it("counts lines the same way for CRLF files", async () => {
    const { code, io } = await run(["check", "crlf.loss"], { "crlf.loss": MISTAKES.replace(/\n/g, "\r\n") });
    expect(code).toBe(1);
    expect(io.out.split("\n")[0]).toBe("crlf.loss:4:23: error unknown-name: unknown name `cc`; did you mean `c`?");
  });

  it("exits 0 on a clean file and prints no error line", async () => {
    const { code, io } = await run(["check", "clean.loss"], { "clean.loss": CLEAN });
    expect(code).toBe(0);
    for (const l of io.out.split("\n").filter((x) => x !== "")) {
      expect(l).toMatch(TEXT_LINE);
      expect(TEXT_LINE.exec(l)![4]).not.toBe("error");
    }
    expect(io.err).toMatch(/^1 file, 2 losses: 0 errors, \d+ warnings?\n$/);
  });
});

describe("--json", () => {
  it("has the documented shape, with 0-based ranges", async () => {
    const { code, io } = await run(["check", "--json", "bad.loss", "clean.loss"], { "bad.loss": MISTAKES, "clean.loss": CLEAN });
    expect(code).toBe(1);
    const json = JSON.parse(io.out) as { files: { file: string; diagnostics: unknown[]; losses: unknown[] }[] };
    expect(Object.keys(json)).toEqual(["files"]);
    expect(json.files.map((f) => f.file)).toEqual(["bad.loss", "clean.loss"]);
    for (const f of json.files) {
      expect(Object.keys(f).sort()).toEqual(["diagnostics", "file", "losses"]);
      for (const d of f.diagnostics as Record<string, unknown>[]) {
        expect(Object.keys(d).sort()).toEqual(["code", "message", "range", "severity"]);
        expect(["error", "warning", "information", "hint"]).toContain(d.severity);
        const r = d.range as { start: { line: number; character: number }; end: { line: number; character: number } };
        for (const p of [r.start, r.end]) {
          expect(Number.isInteger(p.line) && p.line >= 0).toBe(true);
          expect(Number.isInteger(p.character) && p.character >= 0).toBe(true);
        }
      }
      for (const l of f.losses as Record<string, unknown>[]) expectLossShape(l);
    }
    const typo = (json.files[0]!.diagnostics as { code: string; range: unknown }[]).find((d) => d.code === "unknown-name")!;
    // Text line 4, column 23 (1-based) is line 3, character 22 (0-based); the name `cc` is 2 long.
    expect(typo.range).toEqual({ start: { line: 3, character: 22 }, end: { line: 3, character: 24 } });
    const bad = json.files[0]!.losses as { name: string; verdict: string }[];
    expect(bad.map((l) => l.name)).toEqual(["typo", "scale", "half", "range", "call"]);
    // A loss with errors is not analysed, so its verdict is "unknown" (test/reference/notation.md, "Verdicts": "could not decide").
    expect(bad.every((l) => l.verdict === "unknown")).toBe(true);
    const clean = json.files[1]!.losses as { name: string; params: Record<string, number>; threshold: number }[];
    expect(clean.map((l) => [l.name, l.params, l.threshold])).toEqual([
      ["brier", {}, 0.5],
      ["scaled", { s: 2 }, 0.5],
    ]);
    expect(io.err).toBe("");
  });
});

function expectLossShape(l: Record<string, unknown>): void {
  expect(Object.keys(l).sort()).toEqual(
    ["counterexample", "exponents", "flatInterval", "lambda", "modulus", "name", "params", "threshold", "verdict"].sort(),
  );
  expect(typeof l.name).toBe("string");
  expect(typeof l.params).toBe("object");
  for (const v of Object.values(l.params as object)) expect(typeof v).toBe("number");
  expect(["strictly-proper", "proper", "improper", "unknown"]).toContain(l.verdict);
  if (l.counterexample !== null) expect(Object.keys(l.counterexample as object).sort()).toEqual(["eta", "q", "riskAtEta", "riskAtQ"]);
  if (l.flatInterval !== null) {
    expect(Array.isArray(l.flatInterval) && (l.flatInterval as unknown[]).length === 2).toBe(true);
  }
  expect(l.lambda === null || typeof l.lambda === "number").toBe(true);
  if (l.modulus !== null) expect(Object.keys(l.modulus as object).sort()).toEqual(["coefficient", "power"]);
  const ex = l.exponents as Record<string, unknown>;
  expect(Object.keys(ex).sort()).toEqual(["direct", "viaModulus"]);
  for (const v of Object.values(ex)) expect(v === null || typeof v === "number").toBe(true);
  expect(typeof l.threshold).toBe("number");
}

describe("--sarif", () => {
  it("is a SARIF 2.1.0 log whose results point at 1-based regions", async () => {
    const { code, io } = await run(["check", "--sarif", "bad.loss"], { "bad.loss": MISTAKES });
    expect(code).toBe(1);
    const log = JSON.parse(io.out) as {
      version: string;
      $schema: string;
      runs: { tool: { driver: { name: string; rules: { id: string; shortDescription: { text: string } }[] } }; results: Record<string, any>[] }[];
    };
    // OASIS, "Static Analysis Results Interchange Format (SARIF) Version 2.1.0" (2020): §3.13 sarifLog
    // (`version` "2.1.0", a `runs` array), §3.18 tool (`driver`), §3.27 result (`ruleId`, `level`, `locations`).
    expect(log.version).toBe("2.1.0");
    expect(log.$schema).toMatch(/sarif-2\.1\.0/);
    expect(log.runs).toHaveLength(1);
    const run0 = log.runs[0]!;
    expect(run0.tool.driver.name).toBe("propriety");
    const ruleIds = run0.tool.driver.rules.map((r) => r.id);
    expect(new Set(ruleIds).size).toBe(ruleIds.length);
    for (const r of run0.tool.driver.rules) expect(r.shortDescription.text.length).toBeGreaterThan(0);
    expect(run0.results).toHaveLength(7);
    for (const r of run0.results) {
      expect(ruleIds).toContain(r.ruleId);
      // The result levels SARIF defines: none, note, warning, error.
      expect(["none", "note", "warning", "error"]).toContain(r.level);
      expect(typeof r.message.text).toBe("string");
      const loc = r.locations[0].physicalLocation;
      expect(loc.artifactLocation.uri).toBe("bad.loss");
      expect(loc.region.startLine).toBeGreaterThanOrEqual(1);
      expect(loc.region.startColumn).toBeGreaterThanOrEqual(1);
    }
    const typo = run0.results.find((r) => r.ruleId === "unknown-name")!;
    expect(typo.level).toBe("error");
    expect(typo.locations[0].physicalLocation.region).toEqual({ startLine: 4, startColumn: 23, endLine: 4, endColumn: 25 });
  });
});

describe("exit codes and usage errors", () => {
  it("exits 2 with usage help when there are no arguments", async () => {
    const { code, io } = await run([], {});
    expect(code).toBe(2);
    expect(io.out).toMatch(/Usage:/);
  });

  it("exits 2 on an unknown command, a missing file, --json with --sarif, no path, or an unknown option", async () => {
    const cases: [string[], RegExp][] = [
      [["frobnicate"], /unknown command 'frobnicate'/],
      [["check", "missing.loss"], /no such file or directory: missing\.loss/],
      [["check", "--json", "--sarif", "clean.loss"], /--json and --sarif cannot be combined/],
      [["check"], /at least one FILE or DIR/],
      [["check", "--frobnicate", "clean.loss"], /frobnicate/],
      [["check", "empty"], /no \.loss files found in empty/],
    ];
    for (const [argv, message] of cases) {
      const { code, io } = await run(argv, { "clean.loss": CLEAN, "empty/readme.txt": "" });
      expect(code, argv.join(" ")).toBe(2);
      expect(io.err, argv.join(" ")).toMatch(message);
      expect(io.out, argv.join(" ")).toBe("");
    }
  });

  it("exits 2 when a file cannot be read", async () => {
    const { code, io } = await run(["check", "clean.loss"], { "clean.loss": CLEAN }, ["clean.loss"]);
    expect(code).toBe(2);
    expect(io.err).toMatch(/cannot read clean\.loss: permission denied/);
  });

  it("exits 0 for --help and --version", async () => {
    expect((await run(["--help"], {})).code).toBe(0);
    const v = await run(["--version"], {});
    expect(v.code).toBe(0);
    expect(v.io.out).toMatch(/^\d+\.\d+\.\d+\n$/);
  });
});

describe("directories", () => {
  it("searches directories recursively for *.loss files, in sorted order, skipping hidden folders and node_modules", async () => {
    const files = {
      "proj/b.loss": MISTAKES,
      "proj/a.loss": CLEAN,
      "proj/sub/deeper/c.loss": "loss x {\n  l1(q) = zz\n  l0(q) = q\n}\n",
      "proj/sub/notes.txt": "not a loss file",
      "proj/.hidden/d.loss": MISTAKES,
      "proj/node_modules/e.loss": MISTAKES,
    };
    const { code, io } = await run(["check", "--json", "proj/"], files);
    expect(code).toBe(1);
    const json = JSON.parse(io.out) as { files: { file: string }[] };
    expect(json.files.map((f) => norm(f.file))).toEqual(["proj/a.loss", "proj/b.loss", "proj/sub/deeper/c.loss"]);
  });

  it("prints text lines for files found in a directory with their paths", async () => {
    const { code, io } = await run(["check", "proj"], { "proj/sub/c.loss": "loss x {\n  l1(q) = zz\n  l0(q) = q\n}\n" });
    expect(code).toBe(1);
    expect(io.out).toBe("proj/sub/c.loss:2:11: error unknown-name: unknown name `zz`\n");
  });
});

describe("the repository's samples", () => {
  const here = path.dirname(fileURLToPath(import.meta.url));
  const samples = path.resolve(here, "../../samples");
  const present = fs.existsSync(samples);

  it.skipIf(!present)("checks every sample through the real file system", async () => {
    const out: string[] = [];
    const err: string[] = [];
    const io: CliIo = { ...nodeIo, stdout: (t) => out.push(t), stderr: (t) => err.push(t) };
    const code = await main(["check", "--json", samples], io);
    const json = JSON.parse(out.join("")) as { files: { file: string; diagnostics: { code: string; severity: string }[]; losses: Record<string, unknown>[] }[] };
    const expected: string[] = [];
    const walk = (d: string) => {
      for (const n of fs.readdirSync(d).sort()) {
        const p = path.join(d, n);
        if (n.startsWith(".") || n === "node_modules") continue;
        if (fs.statSync(p).isDirectory()) walk(p);
        else if (n.endsWith(".loss")) expected.push(p);
      }
    };
    walk(samples);
    expect(json.files.map((f) => f.file)).toEqual(expected);
    for (const f of json.files) {
      // One report per `loss` item of the file.
      const items = fs.readFileSync(f.file, "utf8").split(/\r?\n/).filter((l) => /^loss\s/.test(l)).length;
      expect(f.losses, f.file).toHaveLength(items);
      for (const l of f.losses) expectLossShape(l);
    }
    const hasErrors = json.files.some((f) => f.diagnostics.some((d) => d.severity === "error"));
    expect(code).toBe(hasErrors ? 1 : 0);
    const mistakes = json.files.find((f) => f.file.endsWith("mistakes.loss"));
    if (mistakes) expect(mistakes.diagnostics.map((d) => d.code)).toContain("unknown-name");
  });
});

describe("the version", () => {
  // The CLI, the language server and the generated headers read one constant; it must match the package.
  it("equals package.json's version", async () => {
    const { VERSION } = await import("../../server/src/version.js");
    const { readFileSync } = await import("node:fs");
    expect(VERSION).toBe(JSON.parse(readFileSync("package.json", "utf8")).version);
  });
});
