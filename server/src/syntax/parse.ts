/**
 * `parse(text)`: lexing, parsing and CST → AST conversion. Never throws: every problem becomes an
 * `Issue`, and the AST is built from whatever the recovering parser produced.
 */
import type { CstNode, IRecognitionException, IToken, TokenType } from "chevrotain";
import { lossLexer } from "../../../grammar/tokens.js";
import * as T from "../../../grammar/tokens.js";
import { lossParser } from "../../../grammar/parser.js";
import { makeIssue, type Issue, type Span } from "../issue.js";
import type {
  BinaryOp, Clause, CommentToken, DefDecl, Expr, FileNode, Ident, Item, LossDecl, ParamDecl, RangeDecl, UnaryOp,
} from "./ast.js";

/** Deepest expression nesting accepted; far beyond any real loss, well inside the JS stack. */
export const MAX_NESTING = 100;
/**
 * Most binary operators in one expression. A chain of `+` builds a left-leaning tree as deep as the chain is
 * long, and the recursive tree walkers (compiler, derivatives) would overflow on tens of thousands; real
 * losses have tens of terms.
 */
export const MAX_OPERATORS = 2000;
/** Largest document analysed, in UTF-16 code units (a loss file is a few kB; this guards editors against huge pastes). */
export const MAX_TEXT_LENGTH = 8_000_000;
/** Lexer errors reported individually before the rest are summarised (binary garbage yields thousands). */
const MAX_LEX_ISSUES = 50;

export interface ParseResult {
  ast: FileNode;
  issues: Issue[];
}

export function parse(text: string): ParseResult {
  try {
    return parseUnguarded(text);
  } catch (err) {
    // The parser is designed not to throw; this is the last line of defence (e.g. a stack overflow).
    const message = err instanceof RangeError ? "the file nests too deeply to parse" : `internal parser error: ${String(err)}`;
    return {
      ast: { items: [], comments: [], span: { start: 0, end: text.length } },
      issues: [makeIssue(err instanceof RangeError ? "parse-too-deep" : "internal-error", message, { start: 0, end: Math.min(1, text.length) })],
    };
  }
}

function parseUnguarded(text: string): ParseResult {
  const issues: Issue[] = [];
  const fileSpan = { start: 0, end: text.length };
  if (text.length > MAX_TEXT_LENGTH) {
    issues.push(makeIssue("parse-file-too-large", `the file has ${text.length} characters; the limit is ${MAX_TEXT_LENGTH}`, { start: 0, end: 1 }));
    return { ast: { items: [], comments: [], span: fileSpan }, issues };
  }

  const lex = lossLexer.tokenize(text);
  lex.errors.slice(0, MAX_LEX_ISSUES).forEach((e) => {
    const ch = text.slice(e.offset, e.offset + e.length);
    issues.push(makeIssue("lex-invalid-character", `unexpected character ${describeChars(ch)}`, { start: e.offset, end: e.offset + Math.max(1, e.length) }));
  });
  if (lex.errors.length > MAX_LEX_ISSUES) {
    const e = lex.errors[MAX_LEX_ISSUES]!;
    issues.push(makeIssue("lex-invalid-character", `${lex.errors.length - MAX_LEX_ISSUES} more unexpected characters not listed`, { start: e.offset, end: e.offset + 1 }));
  }

  const comments: CommentToken[] = ((lex.groups["comments"] ?? []) as IToken[]).map((t) => ({ text: t.image, span: tokenSpan(t) }));
  const builder = new AstBuilder(text, comments);
  const items: Item[] = [];
  const chunks = splitItems(lex.tokens);
  chunks.forEach((chunk, index) => {
    const first = chunk[0]!;
    if (!ITEM_STARTS.has(first.tokenType)) {
      issues.push(makeIssue("parse-unexpected-token", `unexpected ${found(first)}; expected \`param\`, \`def\` or \`loss\``, tokenSpan(first)));
      return;
    }
    const deep = tooDeep(chunk);
    if (deep) {
      const why = deep.reason === "nesting" ? `nests more than ${MAX_NESTING} levels deep` : `has more than ${MAX_OPERATORS} operators`;
      issues.push(makeIssue("parse-too-deep", `this expression ${why}; the item is skipped`, tokenSpan(deep.token)));
      return;
    }
    lossParser.input = chunk;
    const cst = lossParser.item();
    // An item that runs out of tokens ends where the next item starts, not at the end of the file.
    const endOfChunk = { last: chunk[chunk.length - 1]!, next: chunks[index + 1]?.[0] };
    for (const err of lossParser.errors) issues.push(parseErrorIssue(err, text, endOfChunk));
    const item = builder.item(cst);
    if (item) items.push(item);
  });
  return { ast: { items, comments, span: fileSpan }, issues };
}

function describeChars(ch: string): string {
  const cp = ch.codePointAt(0) ?? 0;
  const hex = "U+" + cp.toString(16).toUpperCase().padStart(4, "0");
  if (cp < 0x20 || cp === 0x7f || cp === 0xfffd) return hex;
  return `'${ch}' (${hex})`;
}

function tokenSpan(t: IToken): Span {
  return { start: t.startOffset, end: (t.endOffset ?? t.startOffset) + 1 };
}

const TOKEN_TEXT: Record<string, string> = {
  Identifier: "a name", NumberLiteral: "a number", LParen: "'('", RParen: "')'", LBracket: "'['", RBracket: "']'",
  LBrace: "'{'", RBrace: "'}'", Comma: "','", Equals: "'='", Caret: "'^'", Plus: "'+'", Minus: "'-'", Star: "'*'",
  Slash: "'/'", Less: "'<'", Greater: "'>'", LessEq: "'<='", GreaterEq: "'>='", Param: "'param'", Def: "'def'",
  Loss: "'loss'", In: "'in'", If: "'if'", Then: "'then'", Else: "'else'", And: "'and'", Or: "'or'", Not: "'not'",
  Expect: "'expect'", Canonical: "'canonical'", EOF: "the end of the file",
};

const RULE_EXPECTATION: Record<string, string> = {
  file: "`param`, `def` or `loss`",
  item: "`param`, `def` or `loss`",
  clause: "a clause such as `l1(q) = …` or `expect proper`",
  defineClause: "an expression or `canonical` after `=`",
  expression: "an expression", orExpr: "an expression", andExpr: "an expression", notExpr: "an expression",
  comparison: "an expression", additive: "an expression", multiplicative: "an expression", unary: "an expression",
  power: "an expression", atom: "an expression", callOrName: "an expression", ifExpr: "an expression",
};

function found(t: IToken): string {
  if (t.tokenType.name === "EOF") return "the end of the file";
  return `'${t.image.length > 20 ? t.image.slice(0, 20) + "…" : t.image}'`;
}

function parseErrorIssue(err: IRecognitionException, text: string, chunkEnd: { last: IToken; next: IToken | undefined }): Issue {
  const atEof = err.token.tokenType.name === "EOF" || Number.isNaN(err.token.startOffset);
  // At the end of a chunk the parser sees EOF; report it against the next item's keyword instead.
  const tok = atEof && chunkEnd.next ? chunkEnd.next : err.token;
  const span: Span = atEof
    ? chunkEnd.next ? tokenSpan(chunkEnd.next) : { start: Math.max(0, text.length - 1), end: text.length }
    : tokenSpan(tok);
  const rules = err.context?.ruleStack ?? [];
  const rule = rules[rules.length - 1] ?? "file";
  let message: string;
  if (err.name === "MismatchedTokenException") {
    const m = /--> (\w+) <--/.exec(err.message);
    const expected = m ? TOKEN_TEXT[m[1]!] ?? m[1] : "something else";
    message = `expected ${expected} but found ${found(tok)}`;
    return makeIssue(atEof ? "parse-missing-token" : "parse-unexpected-token", message, atEof && chunkEnd.next ? tokenSpan(chunkEnd.last) : span);
  }
  if (err.name === "NotAllInputParsedException") {
    message = `unexpected ${found(tok)} after the end of the item`;
  } else if (err.name === "EarlyExitException") {
    message = `expected ${RULE_EXPECTATION[rule] ?? "more input"} but found ${found(tok)}`;
  } else {
    message = `${atEof && !chunkEnd.next ? "unexpected end of the file" : `unexpected ${found(tok)}`}; expected ${RULE_EXPECTATION[rule] ?? "something else"}`;
  }
  return makeIssue("parse-unexpected-token", message, span);
}

const ITEM_STARTS = new Set<TokenType>([T.Param, T.Def, T.Loss]);

/**
 * Splits the token stream before every `param`, `def` and `loss` keyword. These keywords never occur
 * inside an item, so a broken item (say, a missing `}` while typing) cannot swallow the items after it.
 * Tokens before the first keyword form a chunk of their own (reported as unexpected).
 */
function splitItems(tokens: IToken[]): IToken[][] {
  const chunks: IToken[][] = [];
  let current: IToken[] = [];
  for (const t of tokens) {
    if (ITEM_STARTS.has(t.tokenType) && current.length > 0) {
      chunks.push(current);
      current = [];
    }
    current.push(t);
  }
  if (current.length > 0) chunks.push(current);
  return chunks;
}

/**
 * Returns the first token at which an item's expressions nest deeper than MAX_NESTING (counting
 * brackets, `^` chains, prefix operators and `if`s), or null. Such items are skipped, so the
 * recursive-descent parser and the tree walkers never see them.
 */
function tooDeep(tokens: IToken[]): { token: IToken; reason: "nesting" | "operators" } | null {
  const openers = new Set<TokenType>([T.LParen, T.LBracket, T.LBrace]);
  const closers = new Set<TokenType>([T.RParen, T.RBracket, T.RBrace]);
  const prefixContext = new Set<TokenType>([
    T.Equals, T.LParen, T.LBracket, T.Comma, T.Plus, T.Minus, T.Star, T.Slash, T.Caret, T.Less, T.Greater,
    T.LessEq, T.GreaterEq, T.And, T.Or, T.Not, T.If, T.Then, T.Else, T.In,
  ]);
  const atoms = new Set<TokenType>([T.Identifier, T.NumberLiteral, T.RParen]);
  let chains: number[] = [0];
  // `if`s per bracket level, never reset by an atom: an `else if … else if …` chain nests one level per
  // `if` (counting sequential `if`s too is conservative and harmless).
  let ifs: number[] = [0];
  const binaryOps = new Set<TokenType>([T.Plus, T.Minus, T.Star, T.Slash, T.Caret, T.And, T.Or, T.Less, T.Greater, T.LessEq, T.GreaterEq]);
  let operators = 0;
  for (let i = 0; i < tokens.length; i++) {
    const type = tokens[i]!.tokenType;
    if (openers.has(type)) {
      chains.push(0);
      ifs.push(0);
    } else if (closers.has(type) && chains.length > 1) {
      chains.pop();
      ifs.pop();
    }
    const prev = i > 0 ? tokens[i - 1]!.tokenType : T.Equals;
    const top = chains.length - 1;
    if (binaryOps.has(type) && !prefixContext.has(prev) && ++operators > MAX_OPERATORS) return { token: tokens[i]!, reason: "operators" };
    if (type === T.Equals) {
      chains = chains.map(() => 0);
      ifs = ifs.map(() => 0);
      operators = 0;
    } else if (type === T.If) {
      ifs[top] = ifs[top]! + 1;
    } else if (type === T.Caret || ((type === T.Minus || type === T.Plus || type === T.Not) && prefixContext.has(prev))) {
      chains[top] = chains[top]! + 1;
    } else if (atoms.has(type) && tokens[i + 1]?.tokenType !== T.Caret) {
      chains[top] = 0;
    }
    const depth = chains.length - 1 + chains.reduce((x, y) => x + y, 0) + ifs.reduce((x, y) => x + y, 0);
    if (depth > MAX_NESTING) return { token: tokens[i]!, reason: "nesting" };
  }
  return null;
}

type Children = Record<string, (CstNode | IToken)[] | undefined>;

function isToken(x: CstNode | IToken | undefined): x is IToken {
  return x !== undefined && (x as IToken).image !== undefined;
}

function tok(c: Children, key: string, i = 0): IToken | undefined {
  const x = c[key]?.[i];
  return isToken(x) && !Number.isNaN(x.startOffset) && x.image !== "" ? x : undefined;
}

function node(c: Children, key: string, i = 0): CstNode | undefined {
  const x = c[key]?.[i];
  return x !== undefined && !isToken(x) ? x : undefined;
}

function nodes(c: Children, key: string): CstNode[] {
  return (c[key] ?? []).filter((x): x is CstNode => !isToken(x));
}

function toks(c: Children, key: string): IToken[] {
  return (c[key] ?? []).filter((x): x is IToken => isToken(x) && !Number.isNaN(x.startOffset) && x.image !== "");
}

function cstSpan(n: CstNode): Span | null {
  const loc = n.location;
  if (!loc || Number.isNaN(loc.startOffset) || loc.endOffset === undefined || Number.isNaN(loc.endOffset)) return null;
  return { start: loc.startOffset, end: loc.endOffset + 1 };
}

class AstBuilder {
  /**
   * End offset of the last source token turned into a node so far. Nodes are built left to right, so a
   * hole that recovery left without any token gets a zero-width span here, never before its left sibling.
   */
  private cursor = 0;

  constructor(
    private readonly text: string,
    private readonly comments: CommentToken[],
  ) {}

  private mark(s: Span): Span {
    if (s.end > this.cursor) this.cursor = s.end;
    return s;
  }

  item(itemNode: CstNode | undefined): Item | null {
    if (!itemNode) return null;
    const c = itemNode.children;
    const p = node(c, "paramDecl");
    const d = node(c, "defDecl");
    const l = node(c, "lossDecl");
    return p ? this.paramDecl(p) : d ? this.defDecl(d) : l ? this.lossDecl(l) : null;
  }

  private ident(t: IToken | undefined): Ident | null {
    return t ? { name: t.image, span: this.mark(tokenSpan(t)) } : null;
  }

  /** Comment lines directly above `offset`, with nothing but whitespace between them and it. */
  private docAbove(offset: number): string | null {
    const lines: string[] = [];
    let cursor = offset;
    // Start at the last comment ending before `offset` (binary search: comments are in source order),
    // so that a file with many items and comments is not scanned once per item.
    let lo = 0;
    let hi = this.comments.length;
    while (lo < hi) {
      const mid = (lo + hi) >> 1;
      if (this.comments[mid]!.span.end <= offset) lo = mid + 1;
      else hi = mid;
    }
    for (let i = lo - 1; i >= 0; i--) {
      const cm = this.comments[i]!;
      if (cm.span.end > cursor) continue;
      const between = this.text.slice(cm.span.end, cursor);
      // Exactly one line break (CRLF, LF or a lone CR, as the line index counts them) between the two.
      if (!/^[ \t]*(?:\r\n|\r|\n)[ \t]*$/.test(between)) break;
      // Only blanks may precede the comment on its line (scanned back to the line break, not further).
      let lineStart = cm.span.start;
      while (lineStart > 0 && this.text[lineStart - 1] !== "\n" && this.text[lineStart - 1] !== "\r") lineStart--;
      if (this.text.slice(lineStart, cm.span.start).trim() !== "") break;
      lines.unshift(cm.text.replace(/^#\s?/, ""));
      cursor = cm.span.start;
    }
    return lines.length > 0 ? lines.join("\n") : null;
  }

  private spanOf(n: CstNode, fallback: Span): Span {
    return cstSpan(n) ?? fallback;
  }

  private paramBody(n: CstNode, global: boolean, keyword?: IToken): ParamDecl | null {
    const c = n.children;
    const name = this.ident(tok(c, "name"));
    if (!name) return null;
    const valueNode = node(c, "value");
    const rangeNode = node(c, "range");
    const span = this.spanOf(n, name.span);
    const start = keyword ? keyword.startOffset : span.start;
    return {
      kind: "param",
      name,
      value: valueNode ? this.expression(valueNode) : null,
      range: rangeNode ? this.range(rangeNode) : null,
      doc: global ? this.docAbove(start) : null,
      global,
      span: { start, end: span.end },
    };
  }

  private paramDecl(n: CstNode): ParamDecl | null {
    const body = node(n.children, "paramBody");
    return body ? this.paramBody(body, true, tok(n.children, "Param")) : null;
  }

  private range(n: CstNode): RangeDecl {
    const c = n.children;
    const lo = node(c, "lo");
    const hi = node(c, "hi");
    return { lo: lo ? this.expression(lo) : null, hi: hi ? this.expression(hi) : null, span: this.spanOf(n, { start: 0, end: 0 }) };
  }

  private defDecl(n: CstNode): DefDecl | null {
    const c = n.children;
    const name = this.ident(tok(c, "name"));
    if (!name) return null;
    const body = node(c, "body");
    const span = this.spanOf(n, name.span);
    return {
      kind: "def",
      name,
      params: toks(c, "params").map((t) => ({ name: t.image, span: tokenSpan(t) })),
      body: body ? this.expression(body) : null,
      doc: this.docAbove(span.start),
      span,
    };
  }

  private lossDecl(n: CstNode): LossDecl | null {
    const c = n.children;
    const name = this.ident(tok(c, "name"));
    if (!name) return null;
    const span = this.spanOf(n, name.span);
    const params = nodes(c, "params").map((p) => this.paramBody(p, false)).filter((p): p is ParamDecl => p !== null);
    const clauses: Clause[] = [];
    for (const cl of nodes(c, "clause")) {
      const e = node(cl.children, "expectClause");
      const d = node(cl.children, "defineClause");
      const clause = e ? this.expectClause(e) : d ? this.defineClause(d) : null;
      if (clause) clauses.push(clause);
    }
    return { kind: "loss", name, params, clauses, doc: this.docAbove(span.start), span };
  }

  private defineClause(n: CstNode): Clause | null {
    const c = n.children;
    const name = this.ident(tok(c, "name"));
    if (!name) return null;
    const value = node(c, "value");
    return {
      kind: "clause",
      name,
      variable: this.ident(tok(c, "variable")),
      value: value ? this.expression(value) : null,
      canonical: tok(c, "Canonical") !== undefined,
      span: this.spanOf(n, name.span),
    };
  }

  private expectClause(n: CstNode): Clause {
    const c = n.children;
    const kw = tok(c, "Expect");
    const value = node(c, "value");
    const op = tok(c, "op");
    const span = this.spanOf(n, kw ? tokenSpan(kw) : { start: 0, end: 0 });
    return {
      kind: "expect",
      words: toks(c, "words").map((t) => ({ name: t.image, span: tokenSpan(t) })),
      op: op ? { text: op.image, span: tokenSpan(op) } : null,
      value: value ? this.expression(value) : null,
      span,
    };
  }

  /** A hole: recovery produced no usable node here. */
  private errorExpr(n: CstNode | undefined): Expr {
    const s = n ? cstSpan(n) : null;
    return { kind: "error", span: s ?? { start: this.cursor, end: this.cursor } };
  }

  expression(n: CstNode): Expr {
    const or = node(n.children, "orExpr");
    return or ? this.leftAssoc(or, "andExpr", (x) => this.leftAssoc(x, "notExpr", (y) => this.notExpr(y))) : this.errorExpr(n);
  }

  /** Folds `operand (op operand)*` into a left-associative binary tree. */
  private leftAssoc(n: CstNode, childKey: string, child: (x: CstNode) => Expr): Expr {
    const c = n.children;
    const operands = nodes(c, "operands");
    const ops = toks(c, "ops");
    if (operands.length === 0) return this.errorExpr(n);
    let acc = child(operands[0]!);
    for (let i = 1; i < operands.length; i++) {
      const op = ops[i - 1];
      if (op) this.mark(tokenSpan(op));
      const right = child(operands[i]!);
      acc = { kind: "binary", op: (op ? normaliseOp(op.image) : "+") as BinaryOp, left: acc, right, span: { start: acc.span.start, end: Math.max(acc.span.end, right.span.end) } };
    }
    void childKey;
    return acc;
  }

  private notExpr(n: CstNode): Expr {
    const c = n.children;
    const operand = node(c, "operand");
    const op = tok(c, "op");
    if (!operand) return this.errorExpr(n);
    if (op) {
      const opSpan = this.mark(tokenSpan(op));
      const inner = this.notExpr(operand);
      return { kind: "unary", op: "not", operand: inner, span: { start: opSpan.start, end: Math.max(opSpan.end, inner.span.end) } };
    }
    return this.comparison(operand);
  }

  private comparison(n: CstNode): Expr {
    return this.leftAssoc(n, "additive", (a) =>
      this.leftAssoc(a, "multiplicative", (m) => this.leftAssoc(m, "unary", (u) => this.unary(u))),
    );
  }

  private unary(n: CstNode): Expr {
    const c = n.children;
    const operand = node(c, "operand");
    const op = tok(c, "op");
    if (!operand) return this.errorExpr(n);
    if (op) {
      const opSpan = this.mark(tokenSpan(op));
      const inner = this.unary(operand);
      return { kind: "unary", op: normaliseOp(op.image) as UnaryOp, operand: inner, span: { start: opSpan.start, end: Math.max(opSpan.end, inner.span.end) } };
    }
    return this.power(operand);
  }

  private power(n: CstNode): Expr {
    const c = n.children;
    const baseNode = node(c, "base");
    const base = baseNode ? this.atom(baseNode) : this.errorExpr(n);
    const expNode = node(c, "exponent");
    const caret = tok(c, "Caret");
    if (!caret) return base;
    this.mark(tokenSpan(caret));
    const exponent = expNode ? this.unary(expNode) : this.errorExpr(n);
    return { kind: "binary", op: "^", left: base, right: exponent, span: { start: base.span.start, end: Math.max(base.span.end, exponent.span.end) } };
  }

  private atom(n: CstNode): Expr {
    const c = n.children;
    const num = tok(c, "number");
    if (num) return { kind: "number", value: Number(num.image), text: num.image, span: this.mark(tokenSpan(num)) };
    const con = node(c, "callOrName");
    if (con) return this.callOrName(con);
    const inner = node(c, "inner");
    if (inner) {
      const lparen = tok(c, "LParen");
      if (lparen) this.mark(tokenSpan(lparen));
      const e = this.expression(inner);
      const span = cstSpan(n) ?? e.span;
      return { kind: "paren", inner: e, span };
    }
    const ife = node(c, "ifExpr");
    if (ife) return this.ifExpr(ife);
    return this.errorExpr(n);
  }

  private callOrName(n: CstNode): Expr {
    const c = n.children;
    const name = tok(c, "name");
    if (!name) return this.errorExpr(n);
    const nameSpan = this.mark(tokenSpan(name));
    const lparen = tok(c, "LParen");
    if (lparen) {
      this.mark(tokenSpan(lparen));
      const args = nodes(c, "args").map((a) => this.expression(a));
      const span = cstSpan(n) ?? nameSpan;
      return { kind: "call", callee: name.image, calleeSpan: nameSpan, args, span };
    }
    return { kind: "name", name: name.image, span: nameSpan };
  }

  private ifExpr(n: CstNode): Expr {
    const c = n.children;
    const part = (key: string) => {
      const x = node(c, key);
      return x ? this.expression(x) : this.errorExpr(n);
    };
    const span = cstSpan(n) ?? { start: 0, end: 0 };
    return { kind: "if", cond: part("cond"), then: part("then"), else: part("else"), span };
  }
}

function normaliseOp(image: string): string {
  return image === "\u2212" ? "-" : image;
}
