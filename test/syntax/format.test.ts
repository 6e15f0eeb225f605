/**
 * The formatter: canonical layout, comment preservation, line endings, refusal on broken text, and
 * round trips (idempotence, same AST modulo spans) over the samples, the parser fixtures and random
 * expressions. The layout rules are the project's own (common practice for code formatters).
 */
import { existsSync, readdirSync, readFileSync } from "node:fs";
import { join } from "node:path";
import fc from "fast-check";
import { describe, expect, it } from "vitest";
import { formatDocument, formatFile, printExpr } from "../../server/src/syntax/format.js";
import { parse } from "../../server/src/syntax/parse.js";
import type { BinaryOp, Expr, UnaryOp } from "../../server/src/syntax/ast.js";
import { lossLexer } from "../../grammar/tokens.js";
import { dumpTree } from "../support/tree-dump.js";

const ROOT = join(import.meta.dirname, "..", "..");
const OK_DIR = join(ROOT, "test", "fixtures", "parse", "ok");
const ERR_DIR = join(ROOT, "test", "fixtures", "parse", "err");
const SAMPLES_DIR = join(ROOT, "samples");

function lossFiles(dir: string): string[] {
  if (!existsSync(dir)) return [];
  return readdirSync(dir).filter((f) => f.endsWith(".loss")).sort().map((f) => join(dir, f));
}

/** Formats text that must be issue-free. */
function fmt(text: string, indent?: number): string {
  const r = formatDocument(text, indent === undefined ? {} : { indent });
  if (r === null) throw new Error(`formatDocument refused:\n${text}\n${JSON.stringify(parse(text).issues)}`);
  return r.text;
}

function shape(text: string): string {
  const { ast, issues } = parse(text);
  return dumpTree(ast, issues, { spans: false });
}

/** The tokens and comments of a text in source order (U+2212 read as '-', as the parser does). */
function tokenSequence(text: string): string[] {
  const lexed = lossLexer.tokenize(text);
  const all = [...lexed.tokens, ...((lexed.groups["comments"] ?? []) as typeof lexed.tokens)];
  return all.sort((a, b) => a.startOffset - b.startOffset).map((t) => (t.image === "\u2212" ? "-" : t.image));
}

/**
 * Checks the round-trip laws on issue-free text and returns the formatted text: no token or comment is
 * lost or reordered, the AST is the same modulo spans, and formatting again changes nothing.
 */
function checkRoundTrip(text: string): string {
  const once = fmt(text);
  expect(parse(once).issues).toEqual([]);
  expect(tokenSequence(once)).toEqual(tokenSequence(text));
  expect(shape(once)).toBe(shape(text));
  expect(fmt(once)).toBe(once);
  return once;
}

describe("canonical layout", () => {
  it("spaces binary operators, keeps `^` tight, one clause per line, blank line between items", () => {
    const src = "param c=0.2 in[0.01,0.99]\ndef s(v)=1/(1+exp(-2*v))\nloss brier{l1(q)=(1-q)^2 l0(q)=q ^ 2}\n";
    expect(fmt(src)).toBe(
      [
        "param c = 0.2 in [0.01, 0.99]",
        "",
        "def s(v) = 1 / (1 + exp(-2 * v))",
        "",
        "loss brier {",
        "  l1(q) = (1 - q)^2",
        "  l0(q) = q^2",
        "}",
        "",
      ].join("\n"),
    );
  });

  it("prints loss parameters, link = canonical and expect forms", () => {
    const src = "loss t(a=0.5 in [0,2],b=2){\nweight(q)=q^(a-1)*(1-q)^(b-1)\nlink=canonical\nexpect strictly proper\nexpect lambda>=2\n}";
    expect(fmt(src)).toBe(
      [
        "loss t(a = 0.5 in [0, 2], b = 2) {",
        "  weight(q) = q^(a - 1) * (1 - q)^(b - 1)",
        "  link = canonical",
        "  expect strictly proper",
        "  expect lambda >= 2",
        "}",
        "",
      ].join("\n"),
    );
  });

  it("prints conditions, comparisons, unary minus and numbers as written", () => {
    const src = "loss p {\n  l1(q) = if q<.5 and not q>=1e-3 or q>2E+4 then -q^2 else q^-2\n  l0(q) = 2^-q^2 - -q\n}\n";
    expect(fmt(src)).toBe(
      [
        "loss p {",
        "  l1(q) = if q < .5 and not q >= 1e-3 or q > 2E+4 then -q^2 else q^-2",
        "  l0(q) = 2^-q^2 - -q",
        "}",
        "",
      ].join("\n"),
    );
  });

  it("keeps the user's parentheses, including redundant ones", () => {
    const src = "def f(x) = ((x)) + (2*x) - (-(x^2))\n";
    expect(fmt(src)).toBe("def f(x) = ((x)) + (2 * x) - (-(x^2))\n");
  });

  it("keeps empty parameter lists and the spelling of names", () => {
    expect(fmt("loss α() {\nl1(q)=q\n}")).toBe("loss α() {\n  l1(q) = q\n}\n");
    expect(fmt("def zero()=0")).toBe("def zero() = 0\n");
  });

  it("honours the indent option", () => {
    expect(fmt("loss x { l1(q) = q }", 4)).toBe("loss x {\n    l1(q) = q\n}\n");
  });

  it("formats an empty document to the empty string and leaves canonical text unchanged", () => {
    expect(formatDocument("")).toEqual({ text: "", changed: false });
    const canonical = "param a = 1\n";
    expect(formatDocument(canonical)).toEqual({ text: canonical, changed: false });
    expect(formatDocument("param  a = 1")).toEqual({ text: canonical, changed: true });
  });
});

describe("comments", () => {
  it("keeps doc blocks, trailing comments, standalone lines and end-of-block/file comments in order", () => {
    const src = [
      "# File header.",
      "",
      "# Doc of c.",
      "param c = 1 # trailing c",
      "# Doc of the loss,",
      "# two lines.",
      "loss x {   # after brace",
      "",
      "  # above l1",
      "  l1(q) = q       # trailing l1",
      "",
      "",
      "  # standalone",
      "",
      "  l0(q) = 1 - q",
      "  # end of block",
      "",
      "}   # after close",
      "",
      "",
      "# end of file",
    ].join("\n");
    const out = fmt(src);
    expect(out).toBe(
      [
        "# File header.",
        "",
        "# Doc of c.",
        "param c = 1  # trailing c",
        "",
        "# Doc of the loss,",
        "# two lines.",
        "loss x {  # after brace",
        "  # above l1",
        "  l1(q) = q  # trailing l1",
        "",
        "  # standalone",
        "",
        "  l0(q) = 1 - q",
        "  # end of block",
        "}  # after close",
        "",
        "# end of file",
        "",
      ].join("\n"),
    );
    // The doc strings are part of the AST, so the round trip also proves they survive.
    checkRoundTrip(src);
    const loss = parse(out).ast.items[1]!;
    expect(loss.kind === "loss" && loss.doc).toBe("Doc of the loss,\ntwo lines.");
  });

  it("breaks a multi-line expression at the comments inside it, keeping token order", () => {
    const src = "loss x {\n  l1(q) = 1 -   # why\n    q  # more\n  l0(q) = max(q, # first\n  # own line\n  0)\n}\n";
    const out = checkRoundTrip(src);
    expect(out).toBe(
      [
        "loss x {",
        "  l1(q) = 1 -  # why",
        "      q  # more",
        "  l0(q) = max(q,  # first",
        "      # own line",
        "      0)",
        "}",
        "",
      ].join("\n"),
    );
  });

  it("keeps a file of comments only", () => {
    const src = "# one\n\n\n# two\n# three";
    expect(fmt(src)).toBe("# one\n\n# two\n# three\n");
  });

  it("never loses a comment wherever one is inserted between tokens", () => {
    // Insert a comment after each token of every ok fixture (where the result still parses) and check
    // that formatting keeps every comment, in order, with the same AST, and is idempotent.
    let checked = 0;
    for (const file of lossFiles(OK_DIR)) {
      const text = readFileSync(file, "utf8");
      const tokens = lossLexer.tokenize(text).tokens;
      for (const t of tokens) {
        const at = (t.endOffset ?? t.startOffset) + 1;
        const variant = `${text.slice(0, at)} # c${t.startOffset}\n${text.slice(at)}`;
        if (parse(variant).issues.length > 0) continue;
        const out = checkRoundTrip(variant);
        expect(out).toContain(`# c${t.startOffset}`);
        checked++;
      }
    }
    expect(checked).toBeGreaterThan(200);
  });
});

describe("layout fuzz", () => {
  it("any re-spacing of a fixture that keeps its tokens formats to the same result", () => {
    // Rebuild each ok fixture from its tokens and comments with random whitespace between them (spaces,
    // tabs, LF, CRLF, blank lines); a comment is always followed by a line break. Variants that merge
    // tokens or no longer parse are discarded; the others must satisfy the round-trip laws.
    const sources = lossFiles(OK_DIR).map((f) => readFileSync(f, "utf8"));
    const separators = ["", " ", "  ", "\t", "\n", "\r\n", "\n\n", " \n  ", "\n\n\n"];
    let kept = 0;
    fc.assert(
      fc.property(
        fc.integer({ min: 0, max: sources.length - 1 }),
        fc.array(fc.integer({ min: 0, max: separators.length - 1 }), { minLength: 400, maxLength: 400 }),
        (which, picks) => {
          const source = sources[which]!;
          const pieces = tokenSequence(source);
          let text = "";
          pieces.forEach((p, i) => {
            let sep = separators[picks[i % picks.length]!]!;
            if (i > 0 && pieces[i - 1]!.startsWith("#") && !sep.includes("\n")) sep = "\n" + sep;
            text += (i > 0 ? sep : "") + p;
          });
          if (tokenSequence(text).join("\u0000") !== pieces.join("\u0000") || parse(text).issues.length > 0) return;
          kept++;
          checkRoundTrip(text);
        },
      ),
      { numRuns: 300, seed: 77 },
    );
    expect(kept).toBeGreaterThan(50);
  });
});

describe("line endings", () => {
  it("keeps CRLF when it is the dominant line ending", () => {
    const src = "param a = 1\r\nparam b=2\r\n# c\r\nloss x {\r\nl1(q) = q\n}\r\n";
    const out = fmt(src);
    expect(out).toBe("param a = 1\r\n\r\nparam b = 2\r\n\r\n# c\r\nloss x {\r\n  l1(q) = q\r\n}\r\n");
    expect(fmt(out)).toBe(out);
  });

  it("uses LF when LF dominates and always ends with a line break", () => {
    const out = fmt("param a = 1\nparam b = 2\r\nparam c = 3");
    expect(out).toBe("param a = 1\n\nparam b = 2\n\nparam c = 3\n");
  });

  it("reads lone CR line breaks as line breaks (docs included) and writes LF", () => {
    const src = "# doc\rparam a = 1\r# trailing doc\rloss x {\r  l1(q) = q\r}\r";
    const out = checkRoundTrip(src);
    expect(out).toBe("# doc\nparam a = 1\n\n# trailing doc\nloss x {\n  l1(q) = q\n}\n");
    const items = parse(src).ast.items;
    expect(items.map((i) => i.doc)).toEqual(["doc", "trailing doc"]);
  });

  it("keeps a byte-order mark", () => {
    expect(fmt("\ufeffparam a=1")).toBe("\ufeffparam a = 1\n");
  });
});

describe("refusal on broken text", () => {
  const errFiles = lossFiles(ERR_DIR);
  it.each(errFiles.map((f) => [f.slice(ERR_DIR.length + 1), f]))("%s is not formatted", (_name, file) => {
    const text = readFileSync(file, "utf8");
    expect(parse(text).issues.length).toBeGreaterThan(0);
    expect(formatDocument(text)).toBeNull();
  });
});

describe("round trip over samples and fixtures", () => {
  const files = [...lossFiles(SAMPLES_DIR), ...lossFiles(OK_DIR)];
  it("has files to check", () => {
    expect(files.length).toBeGreaterThanOrEqual(12);
  });
  it.each(files.map((f) => [f.slice(ROOT.length + 1), f]))("%s: idempotent, same AST modulo spans", (_name, file) => {
    const text = readFileSync(file, "utf8");
    if (parse(text).issues.length > 0) {
      // A sample may be broken on purpose; the formatter must then refuse it.
      expect(formatDocument(text)).toBeNull();
      return;
    }
    checkRoundTrip(text);
  });

  it("formatFile prints the same as formatDocument", () => {
    const text = readFileSync(join(OK_DIR, "009-doc-comments.loss"), "utf8");
    expect(formatFile(parse(text).ast, text)).toBe(fmt(text));
  });
});

// ---------------------------------------------------------------------------------------------------
// Random expressions.

const NO_SPAN = { start: 0, end: 0 };
const NUMBER_TEXTS = ["0", "2", "10", "0.5", ".5", "3.", "1e-3", "2E+4", "1.5e2"];
const BINARY_OPS: BinaryOp[] = ["+", "-", "*", "/", "^", "<", "<=", ">", ">=", "and", "or"];
const UNARY_OPS: UnaryOp[] = ["-", "+", "not"];

const exprArb: fc.Arbitrary<Expr> = fc.letrec<{ expr: Expr }>((tie) => ({
  expr: fc.oneof(
    { maxDepth: 6, depthIdentifier: "expr" },
    // Weighted towards operators so that operator-inside-operator cases (where precedence bugs live) are common.
    fc.constantFrom(...NUMBER_TEXTS).map((text): Expr => ({ kind: "number", value: Number(text), text, span: NO_SPAN })),
    fc.constantFrom("q", "v", "a").map((name): Expr => ({ kind: "name", name, span: NO_SPAN })),
    {
      weight: 2,
      arbitrary: fc
        .tuple(fc.constantFrom(...UNARY_OPS), tie("expr"))
        .map(([op, operand]): Expr => ({ kind: "unary", op, operand, span: NO_SPAN })),
    },
    {
      weight: 6,
      arbitrary: fc
        .tuple(fc.constantFrom(...BINARY_OPS), tie("expr"), tie("expr"))
        .map(([op, left, right]): Expr => ({ kind: "binary", op, left, right, span: NO_SPAN })),
    },
    fc
      .tuple(fc.constantFrom("ln", "exp", "max"), fc.array(tie("expr"), { minLength: 1, maxLength: 3 }))
      .map(([callee, args]): Expr => ({ kind: "call", callee, calleeSpan: NO_SPAN, args: callee === "max" ? args : args.slice(0, 1), span: NO_SPAN })),
    fc
      .tuple(tie("expr"), tie("expr"), tie("expr"))
      .map(([cond, then, otherwise]): Expr => ({ kind: "if", cond, then, else: otherwise, span: NO_SPAN })),
    tie("expr").map((inner): Expr => ({ kind: "paren", inner, span: NO_SPAN })),
  ),
})).expr;

/** An S-expression of the tree with every parenthesis node removed: the structure precedence decides. */
function structure(e: Expr): string {
  switch (e.kind) {
    case "number":
      return e.text;
    case "name":
      return e.name;
    case "call":
      return `(${e.callee} ${e.args.map(structure).join(" ")})`;
    case "unary":
      return `(u${e.op} ${structure(e.operand)})`;
    case "binary":
      return `(${e.op} ${structure(e.left)} ${structure(e.right)})`;
    case "if":
      return `(if ${structure(e.cond)} ${structure(e.then)} ${structure(e.else)})`;
    case "paren":
      return structure(e.inner);
    case "error":
      return "<error>";
  }
}

function firstClauseValue(text: string): Expr {
  const item = parse(text).ast.items[0];
  if (!item || item.kind !== "loss" || item.clauses[0]?.kind !== "clause" || !item.clauses[0].value) {
    throw new Error(`no clause value in:\n${text}`);
  }
  return item.clauses[0].value;
}

describe("random expressions", () => {
  it("print, parse and format without changing structure (precedence, associativity, if, unary minus)", () => {
    fc.assert(
      fc.property(exprArb, (e) => {
        const text = `loss t {\n  l1(q) = ${printExpr(e)}\n  l0(q) = q\n}\n`;
        const parsed = parse(text);
        expect(parsed.issues).toEqual([]);
        // The printer adds parentheses exactly where the grammar needs them to read the same tree.
        expect(structure(firstClauseValue(text))).toBe(structure(e));
        const once = checkRoundTrip(text);
        expect(structure(firstClauseValue(once))).toBe(structure(e));
      }),
      { numRuns: 1500, seed: 20261202 },
    );
  });

  it("adds parentheses only where precedence requires them", () => {
    const n = (text: string): Expr => ({ kind: "number", value: Number(text), text, span: NO_SPAN });
    const q: Expr = { kind: "name", name: "q", span: NO_SPAN };
    const bin = (op: BinaryOp, left: Expr, right: Expr): Expr => ({ kind: "binary", op, left, right, span: NO_SPAN });
    const neg = (operand: Expr): Expr => ({ kind: "unary", op: "-", operand, span: NO_SPAN });
    const ife = (c: Expr, t: Expr, f: Expr): Expr => ({ kind: "if", cond: c, then: t, else: f, span: NO_SPAN });
    expect(printExpr(bin("^", q, bin("^", q, n("2"))))).toBe("q^q^2");
    expect(printExpr(bin("^", bin("^", q, q), n("2")))).toBe("(q^q)^2");
    expect(printExpr(neg(bin("^", q, n("2"))))).toBe("-q^2");
    expect(printExpr(bin("^", neg(q), n("2")))).toBe("(-q)^2");
    expect(printExpr(bin("^", q, neg(n("2"))))).toBe("q^-2");
    expect(printExpr(bin("-", q, bin("-", q, q)))).toBe("q - (q - q)");
    expect(printExpr(bin("-", bin("-", q, q), q))).toBe("q - q - q");
    expect(printExpr(bin("*", bin("+", q, q), q))).toBe("(q + q) * q");
    expect(printExpr(bin("<", bin("<", q, q), q))).toBe("(q < q) < q");
    expect(printExpr(bin("+", ife(q, q, q), q))).toBe("(if q then q else q) + q");
    expect(printExpr(bin("+", q, ife(q, q, q)))).toBe("q + if q then q else q");
    expect(printExpr(bin("+", bin("+", q, ife(q, q, q)), q))).toBe("q + (if q then q else q) + q");
  });
});
