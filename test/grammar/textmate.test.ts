/**
 * Editor-side language files for `.loss`: the TextMate grammar (tokenized for real through vscode-textmate
 * with the oniguruma WASM, as VS Code does), the language configuration and the snippets.
 *
 * Scope names follow the TextMate naming conventions (TextMate 1.x manual, "Language Grammars",
 * §12.4 "Naming Conventions"): common practice, shared by VS Code themes. Expected scopes in the tables
 * are the ones this grammar promises to the themes; the notation they cover is
 * test/reference/notation.md (the v1 contract; README.md, "The notation").
 */
import { beforeAll, describe, expect, it } from "vitest";
import { readFileSync } from "node:fs";
import { createRequire } from "node:module";
import { dirname, join } from "node:path";
import { fileURLToPath } from "node:url";
import type { IGrammar, IOnigLib, StateStack } from "vscode-textmate";
import { lossLexer } from "../../grammar/tokens.js";

const require = createRequire(import.meta.url);
// Both packages are CommonJS bundles; `require` avoids depending on how ESM interop detects their exports.
const vsctm: typeof import("vscode-textmate") = require("vscode-textmate");
const oniguruma: typeof import("vscode-oniguruma") = require("vscode-oniguruma");

const ROOT = join(dirname(fileURLToPath(import.meta.url)), "..", "..");
const GRAMMAR_PATH = join(ROOT, "grammar", "loss.tmLanguage.json");
const CONFIG_PATH = join(ROOT, "grammar", "language-configuration.json");
const SNIPPETS_PATH = join(ROOT, "client", "snippets", "loss.json");

/** One token of a tokenized line: its text and its scope stack (outermost first). */
interface Token {
  readonly text: string;
  readonly scopes: readonly string[];
}

let grammar: IGrammar;

/** Loads the grammar once; the WASM start-up dominates the cost, so every test shares it. */
async function loadLossGrammar(): Promise<IGrammar> {
  const wasm = readFileSync(join(dirname(require.resolve("vscode-oniguruma")), "onig.wasm"));
  await oniguruma.loadWASM(wasm);
  // The two packages declare structurally identical scanner types separately, hence the cast.
  const onigLib: Promise<IOnigLib> = Promise.resolve({
    createOnigScanner: (patterns: string[]) => new oniguruma.OnigScanner(patterns),
    createOnigString: (text: string) => new oniguruma.OnigString(text),
  } as unknown as IOnigLib);
  const registry = new vsctm.Registry({
    onigLib,
    loadGrammar: async (scopeName: string) =>
      scopeName === "source.loss"
        ? vsctm.parseRawGrammar(readFileSync(GRAMMAR_PATH, "utf8"), GRAMMAR_PATH)
        : null,
  });
  const loaded = await registry.loadGrammar("source.loss");
  if (!loaded) throw new Error("source.loss did not load");
  return loaded;
}

/** Tokenizes a whole document line by line, carrying the rule stack as the editor does. */
function tokenizeDocument(text: string): Token[][] {
  let stack: StateStack = vsctm.INITIAL;
  return text.split("\n").map((line) => {
    const result = grammar.tokenizeLine(line, stack);
    stack = result.ruleStack;
    return result.tokens.map((t) => ({ text: line.slice(t.startIndex, t.endIndex), scopes: t.scopes }));
  });
}

/** The innermost scope of the `nth` token (0-based) whose text is exactly `text`. */
function scopeOf(tokens: readonly Token[], text: string, nth = 0): string | undefined {
  return tokens.filter((t) => t.text === text)[nth]?.scopes.at(-1);
}

const SAMPLE = [
  "# Cost ratio for cost-weighted bounds.",
  "# A loss keyword inside a comment: loss brier { l1(q) = q }",
  "param c = 0.2 in [0.01, 0.99]",
  "",
  "def s(v) = 1 / (1 + exp(-2*v))",
  "",
  "loss brier {",
  "  l1(q) = (1 - q)^2",
  "  l0(q) = q^2            # squared error",
  "}",
  "",
  "loss piecewise(a = 0.5 in [0, c], b = max(1, 2) in [0, 4]) {",
  "  bayes(q) = if q < a and not q <= 0 then 2*q else 2*(1 - q)",
  "  threshold = c",
  "}",
  "",
  "loss focal(g = 2 in [0, 5]) {",
  "  l1(v) = -(1 - sigmoid(v))^g * ln(sigmoid(v))",
  "  l0(v) = -sigmoid(v)^g * log1p(-sigmoid(v)) + s(v) − .5e-3",
  "  link = canonical",
  "  expect strictly proper",
  "  expect lambda >= 1e-3 * pi / e",
  "}",
].join("\n");

const SAMPLE_LINES = SAMPLE.split("\n");

/** Data table: line of SAMPLE (exact text), token text, occurrence on that line, expected innermost scope. */
const SCOPE_TABLE: ReadonlyArray<readonly [line: string, text: string, nth: number, scope: string]> = [
  ["# Cost ratio for cost-weighted bounds.", "#", 0, "punctuation.definition.comment.loss"],
  ["# Cost ratio for cost-weighted bounds.", " Cost ratio for cost-weighted bounds.", 0, "comment.line.number-sign.loss"],
  ["param c = 0.2 in [0.01, 0.99]", "param", 0, "keyword.other.declaration.param.loss"],
  ["param c = 0.2 in [0.01, 0.99]", "c", 0, "variable.parameter.global.loss"],
  ["param c = 0.2 in [0.01, 0.99]", "=", 0, "keyword.operator.assignment.loss"],
  ["param c = 0.2 in [0.01, 0.99]", "0.2", 0, "constant.numeric.decimal.loss"],
  ["param c = 0.2 in [0.01, 0.99]", "in", 0, "keyword.other.in.loss"],
  ["param c = 0.2 in [0.01, 0.99]", "[", 0, "punctuation.section.brackets.begin.loss"],
  ["param c = 0.2 in [0.01, 0.99]", ",", 0, "punctuation.separator.comma.loss"],
  ["param c = 0.2 in [0.01, 0.99]", "]", 0, "punctuation.section.brackets.end.loss"],
  ["def s(v) = 1 / (1 + exp(-2*v))", "def", 0, "keyword.other.declaration.def.loss"],
  ["def s(v) = 1 / (1 + exp(-2*v))", "s", 0, "entity.name.function.def.loss"],
  ["def s(v) = 1 / (1 + exp(-2*v))", "v", 0, "variable.parameter.def.loss"],
  ["def s(v) = 1 / (1 + exp(-2*v))", "v", 1, "variable.other.loss"],
  ["def s(v) = 1 / (1 + exp(-2*v))", "exp", 0, "support.function.builtin.loss"],
  ["def s(v) = 1 / (1 + exp(-2*v))", "/", 0, "keyword.operator.arithmetic.loss"],
  ["def s(v) = 1 / (1 + exp(-2*v))", "*", 0, "keyword.operator.arithmetic.loss"],
  ["def s(v) = 1 / (1 + exp(-2*v))", "(", 1, "punctuation.section.parens.begin.loss"],
  ["loss brier {", "loss", 0, "keyword.other.declaration.loss.loss"],
  ["loss brier {", "brier", 0, "entity.name.function.loss.loss"],
  ["loss brier {", "{", 0, "punctuation.section.block.begin.loss"],
  ["  l1(q) = (1 - q)^2", "l1", 0, "keyword.other.clause.loss"],
  ["  l1(q) = (1 - q)^2", "q", 0, "variable.parameter.clause.loss"],
  ["  l1(q) = (1 - q)^2", "q", 1, "variable.other.loss"],
  ["  l1(q) = (1 - q)^2", "^", 0, "keyword.operator.arithmetic.loss"],
  ["  l0(q) = q^2            # squared error", "l0", 0, "keyword.other.clause.loss"],
  ["  l0(q) = q^2            # squared error", " squared error", 0, "comment.line.number-sign.loss"],
  ["}", "}", 0, "punctuation.section.block.end.loss"],
  ["loss piecewise(a = 0.5 in [0, c], b = max(1, 2) in [0, 4]) {", "piecewise", 0, "entity.name.function.loss.loss"],
  ["loss piecewise(a = 0.5 in [0, c], b = max(1, 2) in [0, 4]) {", "a", 0, "variable.parameter.local.loss"],
  ["loss piecewise(a = 0.5 in [0, c], b = max(1, 2) in [0, 4]) {", "c", 0, "variable.other.loss"],
  ["loss piecewise(a = 0.5 in [0, c], b = max(1, 2) in [0, 4]) {", "b", 0, "variable.parameter.local.loss"],
  ["loss piecewise(a = 0.5 in [0, c], b = max(1, 2) in [0, 4]) {", "max", 0, "support.function.builtin.loss"],
  ["loss piecewise(a = 0.5 in [0, c], b = max(1, 2) in [0, 4]) {", "(", 0, "punctuation.definition.parameters.begin.loss"],
  ["loss piecewise(a = 0.5 in [0, c], b = max(1, 2) in [0, 4]) {", ")", 1, "punctuation.definition.parameters.end.loss"],
  ["  bayes(q) = if q < a and not q <= 0 then 2*q else 2*(1 - q)", "bayes", 0, "keyword.other.clause.loss"],
  ["  bayes(q) = if q < a and not q <= 0 then 2*q else 2*(1 - q)", "if", 0, "keyword.control.conditional.loss"],
  ["  bayes(q) = if q < a and not q <= 0 then 2*q else 2*(1 - q)", "then", 0, "keyword.control.conditional.loss"],
  ["  bayes(q) = if q < a and not q <= 0 then 2*q else 2*(1 - q)", "else", 0, "keyword.control.conditional.loss"],
  ["  bayes(q) = if q < a and not q <= 0 then 2*q else 2*(1 - q)", "and", 0, "keyword.operator.logical.loss"],
  ["  bayes(q) = if q < a and not q <= 0 then 2*q else 2*(1 - q)", "not", 0, "keyword.operator.logical.loss"],
  ["  bayes(q) = if q < a and not q <= 0 then 2*q else 2*(1 - q)", "<", 0, "keyword.operator.comparison.loss"],
  ["  bayes(q) = if q < a and not q <= 0 then 2*q else 2*(1 - q)", "<=", 0, "keyword.operator.comparison.loss"],
  ["  threshold = c", "threshold", 0, "keyword.other.clause.loss"],
  ["  threshold = c", "c", 0, "variable.other.loss"],
  ["  l1(v) = -(1 - sigmoid(v))^g * ln(sigmoid(v))", "sigmoid", 0, "support.function.builtin.loss"],
  ["  l1(v) = -(1 - sigmoid(v))^g * ln(sigmoid(v))", "ln", 0, "support.function.builtin.loss"],
  ["  l1(v) = -(1 - sigmoid(v))^g * ln(sigmoid(v))", "v", 0, "variable.parameter.clause.loss"],
  ["  l0(v) = -sigmoid(v)^g * log1p(-sigmoid(v)) + s(v) − .5e-3", "log1p", 0, "support.function.builtin.loss"],
  ["  l0(v) = -sigmoid(v)^g * log1p(-sigmoid(v)) + s(v) − .5e-3", "s", 0, "entity.name.function.call.loss"],
  ["  l0(v) = -sigmoid(v)^g * log1p(-sigmoid(v)) + s(v) − .5e-3", "−", 0, "keyword.operator.arithmetic.loss"],
  ["  l0(v) = -sigmoid(v)^g * log1p(-sigmoid(v)) + s(v) − .5e-3", ".5e-3", 0, "constant.numeric.decimal.loss"],
  ["  link = canonical", "link", 0, "keyword.other.clause.loss"],
  ["  link = canonical", "canonical", 0, "constant.language.canonical.loss"],
  ["  expect strictly proper", "expect", 0, "keyword.other.expect.loss"],
  ["  expect strictly proper", "strictly", 0, "keyword.other.claim.loss"],
  ["  expect strictly proper", "proper", 0, "keyword.other.claim.loss"],
  ["  expect lambda >= 1e-3 * pi / e", "lambda", 0, "keyword.other.claim.loss"],
  ["  expect lambda >= 1e-3 * pi / e", ">=", 0, "keyword.operator.comparison.loss"],
  ["  expect lambda >= 1e-3 * pi / e", "1e-3", 0, "constant.numeric.decimal.loss"],
  ["  expect lambda >= 1e-3 * pi / e", "pi", 0, "constant.language.math.loss"],
  ["  expect lambda >= 1e-3 * pi / e", "e", 0, "constant.language.math.loss"],
];

beforeAll(async () => {
  grammar = await loadLossGrammar();
});

describe("TextMate grammar source.loss", () => {
  let sampleTokens: Token[][];
  beforeAll(() => {
    sampleTokens = tokenizeDocument(SAMPLE);
  });

  it.each(SCOPE_TABLE)("%s: %j (#%i) is %s", (line, text, nth, scope) => {
    const index = SAMPLE_LINES.indexOf(line);
    expect(index, `line not in sample: ${line}`).toBeGreaterThanOrEqual(0);
    expect(scopeOf(sampleTokens[index]!, text, nth)).toBe(scope);
  });

  it("gives every non-blank token of the sample a scope of its own", () => {
    const bare = sampleTokens
      .flatMap((tokens, line) => tokens.map((t) => ({ line, ...t })))
      // Only the root scope or wrapping meta scopes means no rule claimed the text.
      .filter((t) => t.text.trim() !== "" && t.scopes.slice(1).every((s) => s.startsWith("meta.")));
    expect(bare).toEqual([]);
  });

  it("keeps a loss keyword inside a comment a comment", () => {
    const [tokens] = tokenizeDocument("# A loss keyword inside a comment: loss brier { l1(q) = q }");
    const commentBody = tokens!.find((t) => t.text.includes("loss brier"));
    expect(commentBody?.scopes.at(-1)).toBe("comment.line.number-sign.loss");
    expect(tokens!.flatMap((t) => t.scopes)).not.toContain("keyword.other.declaration.loss.loss");
    // The next line must start fresh: the '{' inside the comment opened no block.
    const [, next] = tokenizeDocument("# loss x {\nparam c = 1");
    expect(scopeOf(next!, "param")).toBe("keyword.other.declaration.param.loss");
    expect(next!.flatMap((t) => t.scopes)).not.toContain("meta.block.loss");
  });

  it("treats clause names and claim words as ordinary names outside their context", () => {
    const [def, param] = tokenizeDocument("def l1(q) = weight + proper\nparam lambda = 2");
    expect(scopeOf(def!, "l1")).toBe("entity.name.function.def.loss");
    expect(scopeOf(def!, "weight")).toBe("variable.other.loss");
    expect(scopeOf(def!, "proper")).toBe("variable.other.loss");
    expect(scopeOf(param!, "lambda")).toBe("variable.parameter.global.loss");
  });

  it("does not split identifiers that start with a keyword or built-in, including non-ASCII ones", () => {
    const [tokens] = tokenizeDocument("def f(x) = lnα + lossy + exp_q + σ_2 + e2 + log2(x) + x1");
    for (const name of ["lnα", "lossy", "exp_q", "σ_2", "e2", "x1"]) {
      expect(scopeOf(tokens!, name), name).toBe("variable.other.loss");
    }
    expect(scopeOf(tokens!, "log2")).toBe("support.function.builtin.loss");
  });

  it("closes a one-line loss body and recovers from a missing brace at the next item", () => {
    const lines = tokenizeDocument("loss x { l1(q) = q }\nparam d = 1\nloss broken {\n  l1(q) = q\nparam k = 2");
    expect(scopeOf(lines[0]!, "}")).toBe("punctuation.section.block.end.loss");
    expect(lines[1]!.flatMap((t) => t.scopes)).not.toContain("meta.declaration.loss.loss");
    expect(scopeOf(lines[4]!, "param")).toBe("keyword.other.declaration.param.loss");
    expect(scopeOf(lines[4]!, "k")).toBe("variable.parameter.global.loss");
    expect(lines[4]!.flatMap((t) => t.scopes)).not.toContain("meta.block.loss");
  });

  // The project's chevrotain lexer is the oracle for where tokens start and what kind they are.
  const LEXER_KIND_TO_SCOPES: Readonly<Record<string, readonly string[]>> = {
    Comment: ["punctuation.definition.comment.loss"],
    NumberLiteral: ["constant.numeric."],
    Param: ["keyword.other.declaration."],
    Def: ["keyword.other.declaration."],
    Loss: ["keyword.other.declaration."],
    In: ["keyword.other.in."],
    If: ["keyword.control.conditional."],
    Then: ["keyword.control.conditional."],
    Else: ["keyword.control.conditional."],
    And: ["keyword.operator.logical."],
    Or: ["keyword.operator.logical."],
    Not: ["keyword.operator.logical."],
    Expect: ["keyword.other.expect."],
    Canonical: ["constant.language.canonical."],
    Identifier: ["variable.", "entity.name.function.", "support.function.builtin.", "constant.language.math.", "keyword.other.clause.", "keyword.other.claim."],
    Comma: ["punctuation.separator.comma."],
    LParen: ["punctuation.section.parens.begin.", "punctuation.definition.parameters.begin."],
    RParen: ["punctuation.section.parens.end.", "punctuation.definition.parameters.end."],
    LBracket: ["punctuation.section.brackets.begin."],
    RBracket: ["punctuation.section.brackets.end."],
    LBrace: ["punctuation.section.block.begin."],
    RBrace: ["punctuation.section.block.end."],
    Equals: ["keyword.operator.assignment."],
  };
  const OPERATOR_KINDS = new Set(["LessEq", "GreaterEq", "Less", "Greater", "Plus", "Minus", "Star", "Slash", "Caret"]);

  it("starts a token wherever the notation's lexer does, with a scope of the same kind", () => {
    const lexed = lossLexer.tokenize(SAMPLE);
    expect(lexed.errors).toEqual([]);
    const all = [...lexed.tokens, ...(lexed.groups["comments"] ?? [])];
    // A sanity bound so the loop below cannot pass vacuously (the sample has 196 lexer tokens, counted).
    expect(all.length).toBeGreaterThan(150);
    const mismatches: string[] = [];
    for (const lexToken of all) {
      const kind = lexToken.tokenType.name;
      const line = SAMPLE_LINES[lexToken.startLine! - 1]!;
      const column = lexToken.startColumn! - 1;
      let offset = 0;
      const tmToken = sampleTokens[lexToken.startLine! - 1]!.find((t) => {
        const starts = offset === column;
        offset += t.text.length;
        return starts;
      });
      const scope = tmToken?.scopes.at(-1) ?? "(no token boundary)";
      const allowed = OPERATOR_KINDS.has(kind) ? ["keyword.operator."] : (LEXER_KIND_TO_SCOPES[kind] ?? []);
      if (!allowed.some((prefix) => scope.startsWith(prefix))) {
        mismatches.push(`${kind} ${JSON.stringify(lexToken.image)} at ${lexToken.startLine}:${column} in "${line}" -> ${scope}`);
      }
    }
    expect(mismatches).toEqual([]);
  });

  it("is the grammar package.json contributes for language id loss", () => {
    const manifest = JSON.parse(readFileSync(join(ROOT, "package.json"), "utf8")) as {
      contributes: { grammars: Array<{ language: string; scopeName: string; path: string }>; languages: Array<{ id: string; configuration: string }> };
    };
    const raw = JSON.parse(readFileSync(GRAMMAR_PATH, "utf8")) as { scopeName: string };
    const entry = manifest.contributes.grammars.find((g) => g.language === "loss");
    expect(entry?.scopeName).toBe(raw.scopeName);
    expect(join(ROOT, entry!.path)).toBe(GRAMMAR_PATH);
    const language = manifest.contributes.languages.find((l) => l.id === "loss");
    expect(join(ROOT, language!.configuration)).toBe(CONFIG_PATH);
  });
});

/** A VS Code regex setting: a string, or `{ pattern, flags }` (both forms are accepted by VS Code). */
type RegexSetting = string | { pattern: string; flags?: string };

function compileSetting(setting: RegexSetting): RegExp {
  return typeof setting === "string" ? new RegExp(setting) : new RegExp(setting.pattern, setting.flags ?? "");
}

interface LanguageConfiguration {
  comments: { lineComment: string };
  brackets: Array<[string, string]>;
  autoClosingPairs: Array<{ open: string; close: string }>;
  surroundingPairs: Array<[string, string]>;
  folding: { markers: { start: RegexSetting; end: RegexSetting } };
  wordPattern: RegexSetting;
  indentationRules: { increaseIndentPattern: RegexSetting; decreaseIndentPattern: RegexSetting };
  onEnterRules: Array<{ beforeText: RegexSetting; afterText?: RegexSetting; action: { indent: string } }>;
}

describe("language-configuration.json", () => {
  const config = JSON.parse(readFileSync(CONFIG_PATH, "utf8")) as LanguageConfiguration;
  const PAIRS: Array<[string, string]> = [["{", "}"], ["[", "]"], ["(", ")"]];

  it("declares the '#' line comment and the three bracket pairs everywhere", () => {
    expect(config.comments.lineComment).toBe("#");
    expect(config.brackets).toEqual(expect.arrayContaining(PAIRS));
    expect(config.surroundingPairs).toEqual(expect.arrayContaining(PAIRS));
    expect(config.autoClosingPairs.map((p) => [p.open, p.close])).toEqual(expect.arrayContaining(PAIRS));
  });

  it("has a word pattern that takes identifiers (non-ASCII too) and numbers whole", () => {
    const word = compileSetting(config.wordPattern);
    const words = [..."l1(q) = -σ_2*ln(q) + 0.5e-3 - .5".matchAll(new RegExp(word.source, word.flags + "g"))].map((m) => m[0]);
    expect(words).toEqual(["l1", "q", "σ_2", "ln", "q", "0.5e-3", ".5"]);
  });

  it("indents after an opening brace and outdents on a closing one", () => {
    const increase = compileSetting(config.indentationRules.increaseIndentPattern);
    const decrease = compileSetting(config.indentationRules.decreaseIndentPattern);
    expect(increase.test("loss brier {")).toBe(true);
    expect(increase.test("loss t(a = 1 in [0, 2]) {   # documented")).toBe(true);
    expect(increase.test("loss x { l1(q) = q }")).toBe(false);
    expect(increase.test("# a comment with {")).toBe(false);
    expect(decrease.test("  }")).toBe(true);
    expect(decrease.test("  l1(q) = q")).toBe(false);
  });

  it("folds brace blocks and #region markers", () => {
    const start = compileSetting(config.folding.markers.start);
    const end = compileSetting(config.folding.markers.end);
    expect(start.test("loss brier {")).toBe(true);
    expect(start.test("# region helpers")).toBe(true);
    expect(start.test("  l1(q) = q")).toBe(false);
    expect(end.test("}")).toBe(true);
    expect(end.test("# endregion")).toBe(true);
  });

  it("has onEnter rules whose patterns compile and whose actions are known", () => {
    for (const rule of config.onEnterRules) {
      expect(() => compileSetting(rule.beforeText)).not.toThrow();
      if (rule.afterText !== undefined) expect(() => compileSetting(rule.afterText!)).not.toThrow();
      expect(["none", "indent", "indentOutdent", "outdent"]).toContain(rule.action.indent);
    }
  });
});

interface Snippet {
  prefix: string | string[];
  body: string | string[];
  description?: string;
}

/**
 * Expands VS Code snippet syntax to the text a user gets by accepting every default: choices take their
 * first option, placeholders their default, mirrors their placeholder's default, bare tab stops nothing.
 * Syntax per the VS Code "Snippets in Visual Studio Code" documentation (TextMate snippet grammar).
 */
function expandSnippet(body: string): string {
  const defaults = new Map<string, string>();
  let text = body.replace(/\$\{(\d+)\|([^|]*)\|\}/g, (_m, n: string, options: string) => {
    const first = options.split(",")[0]!;
    defaults.set(n, first);
    return first;
  });
  const mirror = (_m: string, n: string): string => defaults.get(n) ?? "";
  // Innermost placeholders first; nesting in these snippets is shallow, so a few rounds suffice.
  for (let round = 0; round < 10 && /\$\{\d+:/.test(text); round++) {
    text = text.replace(/\$\{(\d+):([^${}]*)\}/g, (_m, n: string, value: string) => {
      defaults.set(n, value);
      return value;
    });
    text = text.replace(/\$\{(\d+)\}|\$(\d+)/g, (m, a: string | undefined, b: string | undefined) =>
      defaults.has(a ?? b!) ? mirror(m, a ?? b!) : m,
    );
  }
  return text.replace(/\$\{(\d+)\}|\$(\d+)/g, (m, a: string | undefined, b: string | undefined) => mirror(m, a ?? b!));
}

describe("snippets loss.json", () => {
  const snippets = JSON.parse(readFileSync(SNIPPETS_PATH, "utf8")) as Record<string, Snippet>;
  const entries = Object.entries(snippets);
  const bodyOf = (s: Snippet): string => (Array.isArray(s.body) ? s.body.join("\n") : s.body);

  it("has the eight snippets, each with a unique non-empty prefix, a body and a description", () => {
    expect(entries.length).toBe(8);
    const prefixes = entries.flatMap(([, s]) => (Array.isArray(s.prefix) ? s.prefix : [s.prefix]));
    for (const prefix of prefixes) expect(prefix.trim()).not.toBe("");
    expect(new Set(prefixes).size).toBe(prefixes.length);
    for (const [name, s] of entries) {
      expect(bodyOf(s).trim(), name).not.toBe("");
      expect(s.description?.trim(), name).toBeTruthy();
    }
  });

  it("expands every body completely (no stray '$' left by malformed tab stops)", () => {
    for (const [name, s] of entries) expect(expandSnippet(bodyOf(s)), name).not.toMatch(/\$/);
  });

  it("expands every body to text the notation's lexer accepts", () => {
    for (const [name, s] of entries) expect(lossLexer.tokenize(expandSnippet(bodyOf(s))).errors, name).toEqual([]);
  });

  // Which scopes the expanded default text must produce: the snippets and the grammar agree on the notation.
  const EXPECTED: ReadonlyArray<readonly [prefix: string, text: string, scope: string]> = [
    ["losspartials", "name", "entity.name.function.loss.loss"],
    ["losspartials", "l1", "keyword.other.clause.loss"],
    ["losspartials", "l0", "keyword.other.clause.loss"],
    ["losspartials", "strictly", "keyword.other.claim.loss"],
    ["lossbayes", "bayes", "keyword.other.clause.loss"],
    ["lossweight", "a", "variable.parameter.local.loss"],
    ["lossweight", "weight", "keyword.other.clause.loss"],
    ["lossweight", "threshold", "keyword.other.clause.loss"],
    ["lossmargin", "margin", "keyword.other.clause.loss"],
    ["lossmargin", "convex", "keyword.other.claim.loss"],
    ["losslink", "link", "keyword.other.clause.loss"],
    ["losslink", "inverse", "keyword.other.clause.loss"],
    ["losslink", "logit", "support.function.builtin.loss"],
    ["param", "name", "variable.parameter.global.loss"],
    ["def", "name", "entity.name.function.def.loss"],
    ["def", "v", "variable.parameter.def.loss"],
    ["expect", "strictly", "keyword.other.claim.loss"],
  ];

  it.each(EXPECTED)("snippet %s expands to text where %j is %s", (prefix, text, scope) => {
    const snippet = entries.find(([, s]) => s.prefix === prefix)?.[1];
    expect(snippet, prefix).toBeDefined();
    const tokens = tokenizeDocument(expandSnippet(bodyOf(snippet!))).flat();
    expect(scopeOf(tokens, text)).toBe(scope);
  });
});
