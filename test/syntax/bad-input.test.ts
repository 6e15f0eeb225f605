/**
 * Hostile and extreme input: the parser must return (never throw) with valid spans, and the formatter
 * must return (a string for issue-free text, null otherwise). Timings are measured and printed, not
 * asserted (the machine is shared); each case is sized to run well under two seconds.
 */
import { describe, expect, it } from "vitest";
import { forEachExpr, type Expr, type FileNode } from "../../server/src/syntax/ast.js";
import { formatDocument } from "../../server/src/syntax/format.js";
import { parse } from "../../server/src/syntax/parse.js";
import type { Span } from "../../server/src/issue.js";
import { seededRandom } from "../../server/src/analysis/numeric/sampling.js";

function checkSpan(s: Span, length: number, what: string): void {
  if (!(Number.isInteger(s.start) && Number.isInteger(s.end) && 0 <= s.start && s.start <= s.end && s.end <= length)) {
    throw new Error(`invalid span ${JSON.stringify(s)} of ${what} in a text of length ${length}`);
  }
}

/** Every span of the AST lies inside the text and is ordered. */
function checkAstSpans(ast: FileNode, length: number): void {
  checkSpan(ast.span, length, "file");
  const exprs: Expr[] = [];
  for (const c of ast.comments) checkSpan(c.span, length, "comment");
  for (const item of ast.items) {
    checkSpan(item.span, length, item.kind);
    checkSpan(item.name.span, length, "item name");
    if (item.kind === "param") {
      if (item.value) exprs.push(item.value);
      if (item.range) {
        checkSpan(item.range.span, length, "range");
        if (item.range.lo) exprs.push(item.range.lo);
        if (item.range.hi) exprs.push(item.range.hi);
      }
    } else if (item.kind === "def") {
      item.params.forEach((p) => checkSpan(p.span, length, "def parameter"));
      if (item.body) exprs.push(item.body);
    } else {
      for (const p of item.params) {
        checkSpan(p.span, length, "loss parameter");
        if (p.value) exprs.push(p.value);
      }
      for (const c of item.clauses) {
        checkSpan(c.span, length, c.kind);
        if (c.value) exprs.push(c.value);
      }
    }
  }
  for (const root of exprs) forEachExpr(root, (e) => checkSpan(e.span, length, `${e.kind} expression`));
}

/** Parses and formats `text`, checks the invariants, and returns what happened with the time taken. */
function survive(text: string): { issues: number; formatted: string | null; ms: number } {
  const t0 = performance.now();
  const { ast, issues } = parse(text);
  for (const i of issues) checkSpan(i.span, text.length, `issue ${i.code}`);
  checkAstSpans(ast, text.length);
  const result = formatDocument(text);
  if (issues.length > 0) expect(result).toBeNull();
  if (result) expect(parse(result.text).issues).toEqual([]);
  return { issues: issues.length, formatted: result?.text ?? null, ms: performance.now() - t0 };
}

function report(name: string, r: { issues: number; ms: number }, size: number): void {
  // Measured, not asserted: printed so that a slow case shows up in the test log.
  process.stdout.write(`[bad-input] ${name}: ${size} chars, ${r.issues} issues, ${r.ms.toFixed(0)} ms\n`);
}

describe("bad input", () => {
  it("binary garbage (seeded random bytes and UTF-16 units) parses and is refused by the formatter", () => {
    const rand = seededRandom(424242);
    for (let k = 0; k < 20; k++) {
      const n = 2000 + Math.floor(rand() * 8000);
      let s = "";
      for (let i = 0; i < n; i++) {
        // Mostly bytes, some arbitrary UTF-16 code units (lone surrogates included).
        s += String.fromCharCode(rand() < 0.8 ? Math.floor(rand() * 256) : Math.floor(rand() * 0x10000));
      }
      const r = survive(s);
      expect(r.issues).toBeGreaterThan(0);
      if (k === 0) report("garbage", r, s.length);
    }
  });

  it("garbage made of the notation's own tokens", () => {
    const rand = seededRandom(7);
    const words = ["loss", "param", "def", "x", "q", "(", ")", "{", "}", "[", "]", "=", "^", "-", "+", "*", "/", ",", "in",
      "if", "then", "else", "and", "or", "not", "<", ">=", "expect", "canonical", "1e-3", ".5", "# c\n", "\n", "\r\n", " "];
    for (let k = 0; k < 200; k++) {
      const n = 1 + Math.floor(rand() * 60);
      let s = "";
      for (let i = 0; i < n; i++) s += words[Math.floor(rand() * words.length)] + (rand() < 0.7 ? " " : "");
      survive(s);
    }
  });

  it("a 1 MB file of many losses", () => {
    const one = (i: number) =>
      `# Loss number ${i}.\nloss l${i}(a = 0.5 in [0, 2]) {\n  l1(q) = (1 - q)^a * ln(1 + q) + ${i}e-3  # trailing\n  l0(q) = if q < 0.5 then q^2 else -q^-a\n  expect proper\n}\n\n`;
    const parts: string[] = [];
    let size = 0;
    for (let i = 0; size < 1_000_000; i++) {
      const p = one(i);
      parts.push(p);
      size += p.length;
    }
    const text = parts.join("");
    // One parse and one format only (each reads the whole megabyte), timed separately.
    const t0 = performance.now();
    const { ast, issues } = parse(text);
    const parseMs = performance.now() - t0;
    expect(issues).toEqual([]);
    checkAstSpans(ast, text.length);
    expect(ast.items.length).toBe(parts.length);
    const t1 = performance.now();
    const result = formatDocument(text);
    const formatMs = performance.now() - t1;
    expect(result).not.toBeNull();
    // The generator writes canonical text except for the blank line after the last loss.
    expect(result!.text === text.slice(0, -1)).toBe(true);
    report("1 MB parse", { issues: issues.length, ms: parseMs }, text.length);
    report("1 MB formatDocument (parse + print)", { issues: 0, ms: formatMs }, text.length);
  });

  it("10,000 nested parentheses are reported, not a crash", () => {
    const text = `param p = ${"(".repeat(10_000)}1${")".repeat(10_000)}\nparam after = 2\n`;
    const r = survive(text);
    expect(r.issues).toBeGreaterThan(0);
    expect(parse(text).issues.some((i) => i.code === "parse-too-deep")).toBe(true);
    // The item after the deep one is still parsed.
    expect(parse(text).ast.items.map((i) => i.name.name)).toEqual(["after"]);
    report("10k parens", r, text.length);
  });

  it("10,000 unary minus signs", () => {
    const text = `loss x {\n  l1(q) = ${"-".repeat(10_000)}q\n  l0(q) = q\n}\n`;
    const r = survive(text);
    expect(r.issues).toBeGreaterThan(0);
    report("10k unary minus", r, text.length);
  });

  it("a 10,000-long q^q^… chain", () => {
    const text = `loss x {\n  l1(q) = ${Array.from({ length: 10_000 }, () => "q").join("^")}\n  l0(q) = q\n}\n`;
    const r = survive(text);
    expect(r.issues).toBeGreaterThan(0);
    report("10k power chain", r, text.length);
  });

  it("a 10,000-long else-if chain is reported as too deep and the next item still parses", () => {
    const chain = Array.from({ length: 10_000 }, (_, i) => `if q < ${i} then ${i} else `).join("") + "0";
    const text = `loss x {\n  l1(q) = ${chain}\n  l0(q) = q\n}\nparam after = 1\n`;
    const r = survive(text);
    const { ast, issues } = parse(text);
    expect(issues.map((i) => i.code)).toEqual(["parse-too-deep"]);
    expect(ast.items.map((i) => i.name.name)).toEqual(["after"]);
    report("10k else-if chain", r, text.length);
  });

  it("nesting just inside the limit parses and formats", () => {
    const ifs = Array.from({ length: 20 }, (_, i) => `if q < ${i} then ${i} else `).join("") + "0";
    const text = `param p = ${"(".repeat(40)}1${")".repeat(40)} + ${Array.from({ length: 30 }, () => "q").join("^")} + ${ifs}\n`;
    const r = survive(text);
    expect(r.issues).toBe(0);
    expect(r.formatted).toBe(text);
  });

  it("a long flat sum within the operator limit parses and formats", () => {
    const text = `param p = ${Array.from({ length: 1_500 }, (_, i) => String(i)).join(" + ")}\n`;
    const r = survive(text);
    expect(r.issues).toBe(0);
    // Compared as a boolean: a failure message holding two long strings helps nobody.
    expect(r.formatted === text).toBe(true);
    report("1.5k-term sum", r, text.length);
  });

  it("a 20k-term sum is skipped with parse-too-deep, and the next item still parses", () => {
    const text = `param p = ${Array.from({ length: 20_000 }, (_, i) => String(i)).join(" + ")}\nparam ok = 1\n`;
    const { ast, issues } = parse(text);
    expect(issues.map((i) => i.code)).toEqual(["parse-too-deep"]);
    expect(ast.items.map((i) => i.name.name)).toEqual(["ok"]);
  });

  it("unterminated blocks, parentheses and brackets", () => {
    for (const text of [
      "loss a {",
      "loss a {\n  l1(q) = (1 - q",
      "loss a(b = 1 in [0, {\n",
      "loss a {\nloss b {\nloss c {\n",
      "def f(x = ",
      "param c = 0.2 in [0.01,",
      "loss a { l1(q) = if q < 1 then",
      "loss a { expect lambda >=",
      "}}}}",
      "((((",
    ]) {
      expect(survive(text).issues).toBeGreaterThan(0);
    }
  });

  it("non-ASCII identifiers and characters", () => {
    expect(survive("param α = 0.5\nloss ℓ(β = 2) {\n  l1(q) = (1 − q)^β\n  l0(q) = q^β * α\n}\n").issues).toBe(0);
    // Emoji and a zero-width space are not part of the notation.
    expect(survive("param 😀 = 1\nparam a\u200b = 2\n").issues).toBeGreaterThan(0);
  });

  it("a Windows/Unix line-ending mix", () => {
    const text = "param a = 1\r\n# doc\nloss x {\r\n  l1(q) = 1 -\r\n q\n  l0(q) = q  # t\r\n}\r\n\r\n\n# end\r";
    const r = survive(text);
    expect(r.issues).toBe(0);
    expect(r.formatted).toBe("param a = 1\r\n\r\n# doc\r\nloss x {\r\n  l1(q) = 1 - q\r\n  l0(q) = q  # t\r\n}\r\n\r\n# end\r\n");
  });

  it("an empty file, whitespace only, and comments only", () => {
    expect(survive("")).toEqual(expect.objectContaining({ issues: 0, formatted: "" }));
    expect(survive(" \n\t\r\n").formatted).toBe("");
    expect(survive("# a\n#b\n\n\n#c").formatted).toBe("# a\n#b\n\n#c\n");
  });

  it("truncations of a valid file at every offset", () => {
    const full = "# doc\nparam c = 0.2 in [0.01, 0.99]\ndef s(v) = 1 / (1 + exp(-2*v))\nloss f(g = 2 in [0, 5]) {\n  l1(q) = -(1-q)^g * ln(q)  # t\n  l0(q) = if q < .5 and not q > 1 then -q^g else q\n  link = canonical\n  expect lambda >= 2\n}\n";
    for (let i = 0; i <= full.length; i++) survive(full.slice(0, i));
  });
});
