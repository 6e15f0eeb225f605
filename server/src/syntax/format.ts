/**
 * The canonical layout of `.loss` files (the formatter behind the editor's "Format Document").
 *
 * Layout: one item per line group with a blank line between top-level items; loss bodies indented
 * (2 spaces by default), one clause per line; spaces around binary operators except `^`; numbers and
 * names exactly as written; the user's parentheses kept and none added unless precedence requires it.
 * Every comment is kept, in order: documentation blocks and standalone comment lines stay on their own
 * lines, same-line comments stay after their code (two spaces before the `#`), and a comment written
 * inside a multi-line expression breaks the printed line at the same token. The output uses the
 * document's dominant line ending and ends with one.
 *
 * Pure: no file system, no editor types. Only issue-free text is formatted; see {@link formatDocument}.
 */
import { parse } from "./parse.js";
import type { BinaryOp, Clause, CommentToken, DefDecl, Expr, FileNode, Item, LossDecl, ParamDecl } from "./ast.js";

/** Options of the formatter. */
export interface FormatOptions {
  /** Spaces per indentation level (default 2; clamped to 1..8). */
  indent?: number;
  /** Indent with one tab per level instead of spaces (the editor's `insertSpaces: false`). */
  tabs?: boolean;
}

/** Result of {@link formatDocument}. */
export interface FormatResult {
  text: string;
  /** True when the formatted text differs from the input. */
  changed: boolean;
}

/**
 * Formats a whole document. Returns null — and formats nothing — when the text has any lexical or
 * syntax issue: a recovering parser's tree of broken text is partial, and printing it would drop or
 * reorder what the user typed. Never throws.
 */
export function formatDocument(text: string, options: FormatOptions = {}): FormatResult | null {
  const { ast, issues } = parse(text);
  if (issues.length > 0) return null;
  try {
    const out = formatFile(ast, text, options);
    return { text: out, changed: out !== text };
  } catch {
    // The printer only recurses as deep as the parser's nesting limit allows; this guard keeps the
    // public function total even for an AST built by other means.
    return null;
  }
}

/**
 * Prints a parsed file in the canonical layout. `text` is the source the AST was parsed from (comments,
 * operator positions and blank lines are taken from it). Meant for issue-free parses: holes left by
 * error recovery are printed as their source text, and missing parts are left out.
 */
export function formatFile(ast: FileNode, text: string, options: FormatOptions = {}): string {
  return new FilePrinter(ast, text, options).print();
}

/** Prints one expression in canonical form, adding parentheses only where precedence requires them. */
export function printExpr(e: Expr): string {
  const frags: Frag[] = [];
  new ExprPrinter(new TokenIndex(""), "", frags).print(e, false, 0, false);
  return joinFrags(frags);
}

// ---------------------------------------------------------------------------------------------------
// Precedence.

/** Binding power of each binary operator (higher binds tighter); unary `not` is 3, unary `-`/`+` is 7. */
const BINARY_PREC: Record<BinaryOp, number> = {
  or: 1, and: 2, "<": 4, "<=": 4, ">": 4, ">=": 4, "+": 5, "-": 5, "*": 6, "/": 6, "^": 8,
};
const NOT_PREC = 3;
const SIGN_PREC = 7;
const ATOM_PREC = 9;

type BinaryExpr = Extract<Expr, { kind: "binary" }>;

function precOf(e: Expr): number {
  if (e.kind === "binary") return BINARY_PREC[e.op];
  if (e.kind === "unary") return e.op === "not" ? NOT_PREC : SIGN_PREC;
  return ATOM_PREC;
}

/** Lowest precedence each operand of a binary operator may have without parentheses, as the grammar reads it. */
function operandPrec(op: BinaryOp): { left: number; right: number } {
  const p = BINARY_PREC[op];
  // `^` is right-associative and its base is an atom; its exponent may carry a sign (`q^-2`).
  if (op === "^") return { left: ATOM_PREC, right: SIGN_PREC };
  // Comparisons do not chain (`a < b < c` is a syntax error), so both sides must bind tighter.
  if (p === 4) return { left: 5, right: 5 };
  // The others are left-associative.
  return { left: p, right: p + 1 };
}

// ---------------------------------------------------------------------------------------------------
// Fragments: the printed tokens of one line unit, each tagged with the source position it came from.

interface Frag {
  text: string;
  /** Source offset of the token (for ordering comments); -1 when unknown. */
  pos: number;
  /** A space goes before this fragment when it is not first on its line. */
  space: boolean;
}

function joinFrags(frags: readonly Frag[]): string {
  let s = "";
  frags.forEach((f, i) => {
    s += (i > 0 && f.space ? " " : "") + f.text;
  });
  return s;
}

/** Whitespace as the lexer skips it. */
const SKIPPED = /[ \t\r\n\f\v\u00a0\ufeff]/;

/**
 * Finds the source offsets of tokens the AST does not record (operators, brackets, keywords) by looking
 * just past the node before them. Scanning the text, rather than lexing it again, keeps formatting
 * linear and cheap.
 */
class TokenIndex {
  constructor(private readonly text: string) {}

  /**
   * Offset of `image` when it is the next token at or after `offset` (skipping whitespace and comments),
   * else -1. A miss only affects where a comment is placed, never what is printed.
   */
  find(offset: number, image: string): number {
    const t = this.text;
    let i = Math.max(0, offset);
    while (i < t.length) {
      const ch = t[i]!;
      if (SKIPPED.test(ch)) i++;
      else if (ch === "#") {
        while (i < t.length && t[i] !== "\n" && t[i] !== "\r") i++;
      } else break;
    }
    if (t.startsWith(image, i) || (image === "-" && t[i] === "\u2212")) return i;
    return -1;
  }
}

class ExprPrinter {
  constructor(
    private readonly tokens: TokenIndex,
    private readonly text: string,
    private readonly out: Frag[],
  ) {}

  private push(text: string, pos: number, space: boolean): void {
    this.out.push({ text, pos, space });
  }

  /**
   * Prints `e`. `space`: whether a space separates it from what precedes it. `minPrec`: the lowest
   * precedence allowed here without parentheses. `tail`: whether more operators follow in the same
   * expression — an `if` would swallow them into its `else` branch, so it then needs parentheses.
   */
  print(e: Expr, space: boolean, minPrec: number, tail: boolean): void {
    if (precOf(e) < minPrec || (e.kind === "if" && tail)) {
      this.push("(", e.span.start, space);
      this.printBare(e, false, false);
      this.push(")", Math.max(e.span.start, e.span.end - 1), false);
      return;
    }
    this.printBare(e, space, tail);
  }

  private printBare(e: Expr, space: boolean, tail: boolean): void {
    switch (e.kind) {
      case "number":
        this.push(e.text, e.span.start, space);
        return;
      case "name":
        this.push(e.name, e.span.start, space);
        return;
      case "call": {
        this.push(e.callee, e.calleeSpan.start, space);
        let cursor = e.calleeSpan.end;
        const open = this.tokens.find(cursor, "(");
        if (open >= 0) cursor = open + 1;
        this.push("(", open, false);
        e.args.forEach((a, i) => {
          if (i > 0) this.push(",", this.tokens.find(cursor, ","), false);
          this.print(a, i > 0, 0, false);
          cursor = a.span.end;
        });
        this.push(")", this.tokens.find(cursor, ")"), false);
        return;
      }
      case "unary":
        this.push(e.op, e.span.start, space);
        // `not` is a word and needs a space; a sign sticks to its operand.
        this.print(e.operand, e.op === "not", e.op === "not" ? NOT_PREC : SIGN_PREC, tail);
        return;
      case "binary": {
        // Walk the left spine without recursion: a flat sum of n terms is a left-deep tree n levels deep.
        const spine: BinaryExpr[] = [e];
        let leftmost: Expr = e.left;
        while (leftmost.kind === "binary" && precOf(leftmost) >= operandPrec(spine[spine.length - 1]!.op).left) {
          spine.push(leftmost);
          leftmost = leftmost.left;
        }
        this.print(leftmost, space, operandPrec(spine[spine.length - 1]!.op).left, true);
        for (let j = spine.length - 1; j >= 0; j--) {
          const b = spine[j]!;
          const tight = b.op === "^";
          this.push(b.op, this.tokens.find(b.left.span.end, b.op), !tight);
          this.print(b.right, !tight, operandPrec(b.op).right, j === 0 ? tail : true);
        }
        return;
      }
      case "if":
        this.push("if", e.span.start, space);
        this.print(e.cond, true, 0, false);
        this.push("then", this.tokens.find(e.cond.span.end, "then"), true);
        this.print(e.then, true, 0, false);
        this.push("else", this.tokens.find(e.then.span.end, "else"), true);
        this.print(e.else, true, 0, tail);
        return;
      case "paren":
        this.push("(", e.span.start, space);
        this.print(e.inner, false, 0, false);
        this.push(")", Math.max(e.span.start, e.span.end - 1), false);
        return;
      case "error":
        // Only reachable for a broken parse, which formatDocument refuses; keep the source text.
        this.push(this.text.slice(e.span.start, e.span.end).replace(/\s+/g, " ").trim() || "?", e.span.start, space);
        return;
    }
  }
}

// ---------------------------------------------------------------------------------------------------
// Line units and the gaps between them.

type UnitKind = "item" | "header" | "clause" | "close";

interface Unit {
  kind: UnitKind;
  /** Indentation level. */
  level: number;
  frags: Frag[];
  /** Source offset just past the unit's last token. */
  end: number;
  /** Comments inside the unit, each after fragment `after`. */
  inner: { after: number; comment: CommentToken; ownLine: boolean }[];
  /** A comment on the same line after the unit's last token. */
  trailing: CommentToken | null;
}

/** Where a gap between two units lies; decides the indentation of its comments and its blank lines. */
type GapKind = "file-start" | "between-items" | "file-end" | "block-start" | "block-mid" | "block-end" | "block-empty";

interface Gap {
  kind: GapKind;
  level: number;
  comments: CommentToken[];
}

const LINE_BREAK = /\r\n|\r|\n/g;

function countLineBreaks(s: string): number {
  return s.match(LINE_BREAK)?.length ?? 0;
}

class FilePrinter {
  private readonly tokens: TokenIndex;
  private readonly unit: string;
  private readonly eol: string;
  private readonly units: Unit[] = [];

  constructor(
    private readonly ast: FileNode,
    private readonly text: string,
    options: FormatOptions,
  ) {
    this.tokens = new TokenIndex(text);
    const width = Math.min(8, Math.max(1, Math.floor(options.indent ?? 2)));
    this.unit = options.tabs ? "\t" : " ".repeat(width);
    this.eol = dominantEol(text);
  }

  print(): string {
    for (const item of this.ast.items) this.addItem(item);
    const gaps = this.placeComments();
    const lines: string[] = [];
    for (let i = 0; i <= this.units.length; i++) {
      this.renderGap(gaps[i]!, i, lines);
      if (i < this.units.length) this.renderUnit(this.units[i]!, lines);
    }
    const bom = this.text.startsWith("\ufeff") ? "\ufeff" : "";
    if (lines.length === 0) return bom;
    return bom + lines.join(this.eol) + this.eol;
  }

  // --- Building units from the AST.

  private newUnit(kind: UnitKind, level: number): { unit: Unit; exprs: ExprPrinter } {
    const unit: Unit = { kind, level, frags: [], end: 0, inner: [], trailing: null };
    return { unit, exprs: new ExprPrinter(this.tokens, this.text, unit.frags) };
  }

  private finish(unit: Unit, end: number): void {
    unit.end = end;
    this.units.push(unit);
  }

  private addItem(item: Item): void {
    if (item.kind === "param") {
      const { unit, exprs } = this.newUnit("item", 0);
      unit.frags.push({ text: "param", pos: item.span.start, space: false });
      this.paramBody(item, unit, exprs, true);
      this.finish(unit, item.span.end);
    } else if (item.kind === "def") {
      this.addDef(item);
    } else {
      this.addLoss(item);
    }
  }

  private paramBody(p: ParamDecl, unit: Unit, exprs: ExprPrinter, space: boolean): void {
    unit.frags.push({ text: p.name.name, pos: p.name.span.start, space });
    unit.frags.push({ text: "=", pos: this.tokens.find(p.name.span.end, "="), space: true });
    if (p.value) exprs.print(p.value, true, 0, false);
    if (p.range) {
      const r = p.range;
      const inPos = this.tokens.find(p.value?.span.end ?? p.name.span.end, "in");
      unit.frags.push({ text: "in", pos: inPos, space: true });
      unit.frags.push({ text: "[", pos: this.tokens.find(inPos >= 0 ? inPos + 2 : r.span.start, "["), space: true });
      if (r.lo) exprs.print(r.lo, false, 0, false);
      unit.frags.push({ text: ",", pos: this.tokens.find(r.lo?.span.end ?? r.span.start, ","), space: false });
      if (r.hi) exprs.print(r.hi, true, 0, false);
      unit.frags.push({ text: "]", pos: Math.max(r.span.start, r.span.end - 1), space: false });
    }
  }

  private addDef(d: DefDecl): void {
    const { unit, exprs } = this.newUnit("item", 0);
    unit.frags.push({ text: "def", pos: d.span.start, space: false });
    unit.frags.push({ text: d.name.name, pos: d.name.span.start, space: true });
    let cursor = d.name.span.end;
    const open = this.tokens.find(cursor, "(");
    if (open >= 0) cursor = open + 1;
    unit.frags.push({ text: "(", pos: open, space: false });
    d.params.forEach((p, i) => {
      if (i > 0) unit.frags.push({ text: ",", pos: this.tokens.find(cursor, ","), space: false });
      unit.frags.push({ text: p.name, pos: p.span.start, space: i > 0 });
      cursor = p.span.end;
    });
    const close = this.tokens.find(cursor, ")");
    unit.frags.push({ text: ")", pos: close, space: false });
    unit.frags.push({ text: "=", pos: this.tokens.find(close >= 0 ? close + 1 : cursor, "="), space: true });
    if (d.body) exprs.print(d.body, true, 0, false);
    this.finish(unit, d.span.end);
  }

  private addLoss(l: LossDecl): void {
    const head = this.newUnit("header", 0);
    const frags = head.unit.frags;
    frags.push({ text: "loss", pos: l.span.start, space: false });
    frags.push({ text: l.name.name, pos: l.name.span.start, space: true });
    let cursor = l.name.span.end;
    // `loss x() {` keeps its empty parentheses: the formatter never drops tokens.
    const open = this.tokens.find(cursor, "(");
    if (l.params.length > 0 || open >= 0) {
      if (open >= 0) cursor = open + 1;
      frags.push({ text: "(", pos: open, space: false });
      l.params.forEach((p, i) => {
        if (i > 0) frags.push({ text: ",", pos: this.tokens.find(cursor, ","), space: false });
        this.paramBody(p, head.unit, head.exprs, i > 0);
        cursor = p.span.end;
      });
      const close = this.tokens.find(cursor, ")");
      frags.push({ text: ")", pos: close, space: false });
      if (close >= 0) cursor = close + 1;
    }
    const lbrace = this.tokens.find(cursor, "{");
    frags.push({ text: "{", pos: lbrace, space: true });
    this.finish(head.unit, lbrace >= 0 ? lbrace + 1 : cursor);

    for (const c of l.clauses) this.addClause(c);

    const closePos = Math.max(l.span.start, l.span.end - 1);
    const close = this.newUnit("close", 0);
    close.unit.frags.push({ text: "}", pos: closePos, space: false });
    this.finish(close.unit, closePos + 1);
  }

  private addClause(c: Clause): void {
    const { unit, exprs } = this.newUnit("clause", 1);
    if (c.kind === "expect") {
      unit.frags.push({ text: "expect", pos: c.span.start, space: false });
      for (const w of c.words) unit.frags.push({ text: w.name, pos: w.span.start, space: true });
      if (c.op) unit.frags.push({ text: c.op.text, pos: c.op.span.start, space: true });
      if (c.value) exprs.print(c.value, true, 0, false);
    } else {
      unit.frags.push({ text: c.name.name, pos: c.name.span.start, space: false });
      let cursor = c.name.span.end;
      if (c.variable) {
        unit.frags.push({ text: "(", pos: this.tokens.find(cursor, "("), space: false });
        unit.frags.push({ text: c.variable.name, pos: c.variable.span.start, space: false });
        cursor = c.variable.span.end;
        const close = this.tokens.find(cursor, ")");
        unit.frags.push({ text: ")", pos: close, space: false });
        if (close >= 0) cursor = close + 1;
      }
      const eq = this.tokens.find(cursor, "=");
      unit.frags.push({ text: "=", pos: eq, space: true });
      if (c.canonical) unit.frags.push({ text: "canonical", pos: this.tokens.find(eq >= 0 ? eq + 1 : cursor, "canonical"), space: true });
      else if (c.value) exprs.print(c.value, true, 0, false);
    }
    this.finish(unit, c.span.end);
  }

  // --- Comments.

  /** True when only whitespace precedes the comment on its line. */
  private isOwnLine(c: CommentToken): boolean {
    for (let i = c.span.start - 1; i >= 0; i--) {
      const ch = this.text[i]!;
      if (ch === "\n" || ch === "\r") return true;
      if (!SKIPPED.test(ch)) return false;
    }
    return true;
  }

  /** Assigns every comment to the unit it sits in, as a unit's trailing comment, or to a gap; returns the gaps. */
  private placeComments(): Gap[] {
    const gaps: Gap[] = [];
    for (let i = 0; i <= this.units.length; i++) gaps.push({ ...this.gapKind(i), comments: [] });
    const comments = [...this.ast.comments].sort((a, b) => a.span.start - b.span.start);
    let u = 0;
    // Index of the last fragment of unit `u` known to start before the current comment; comments come
    // in source order, so one forward scan per unit suffices.
    let after = 0;
    for (const c of comments) {
      // Advance to the first unit that ends after the comment starts.
      while (u < this.units.length && this.units[u]!.end <= c.span.start) {
        u++;
        after = 0;
      }
      const unit = this.units[u];
      const first = unit ? firstPos(unit) : -1;
      if (unit && first >= 0 && first < c.span.start) {
        for (let i = after + 1; i < unit.frags.length; i++) {
          const pos = unit.frags[i]!.pos;
          if (pos < 0) continue;
          if (pos >= c.span.start) break;
          after = i;
        }
        unit.inner.push({ after, comment: c, ownLine: this.isOwnLine(c) });
        continue;
      }
      const prev = u > 0 ? this.units[u - 1]! : null;
      if (prev && prev.trailing === null && gaps[u]!.comments.length === 0 && !this.isOwnLine(c)) {
        prev.trailing = c;
        continue;
      }
      gaps[u]!.comments.push(c);
    }
    return gaps;
  }

  private gapKind(i: number): { kind: GapKind; level: number } {
    const prev = this.units[i - 1];
    const next = this.units[i];
    if (!prev) return { kind: "file-start", level: 0 };
    if (!next) return { kind: "file-end", level: 0 };
    if (prev.kind === "header") return { kind: next.kind === "close" ? "block-empty" : "block-start", level: 1 };
    if (prev.kind === "clause") return { kind: next.kind === "close" ? "block-end" : "block-mid", level: 1 };
    return { kind: "between-items", level: 0 };
  }

  // --- Rendering.

  private indentOf(level: number): string {
    return this.unit.repeat(level);
  }

  /**
   * Comment lines of a gap with their blank lines. Source blank lines are kept (at most one), except
   * that top-level items are always separated by one and blocks neither start nor end with one.
   */
  private renderGap(gap: Gap, next: number, lines: string[]): void {
    const prev = next > 0 ? this.units[next - 1]! : null;
    const ind = this.indentOf(gap.level);
    let cursor = prev ? prev.trailing?.span.end ?? prev.end : 0;
    const boundaries = gap.comments.length + 1;
    for (let b = 0; b < boundaries; b++) {
      const isFirst = b === 0;
      const isLast = b === boundaries - 1;
      const target = isLast ? this.units[next] : undefined;
      if (isLast && !target) break;
      const to = isLast ? firstPos(target!) : gap.comments[b]!.span.start;
      const sourceBlank = countLineBreaks(this.text.slice(cursor, Math.max(cursor, to))) >= 2;
      let blank = sourceBlank;
      if (gap.kind === "between-items" && isFirst) blank = true;
      if (gap.kind === "file-start" && isFirst) blank = false;
      if ((gap.kind === "block-start" || gap.kind === "block-empty") && isFirst) blank = false;
      if ((gap.kind === "block-end" || gap.kind === "block-empty") && isLast) blank = false;
      if (blank) lines.push("");
      if (!isLast) {
        const c = gap.comments[b]!;
        lines.push(ind + c.text);
        cursor = c.span.end;
      }
    }
  }

  private renderUnit(u: Unit, lines: string[]): void {
    const ind = this.indentOf(u.level);
    const cont = this.indentOf(u.level + 2);
    let line = ind;
    let fresh = true;
    // Inner comments are in source order, hence sorted by the fragment they follow.
    let next = 0;
    u.frags.forEach((f, i) => {
      line += (f.space && !fresh ? " " : "") + f.text;
      fresh = false;
      for (; next < u.inner.length && u.inner[next]!.after === i; next++) {
        const c = u.inner[next]!;
        if (c.ownLine) {
          if (!fresh) lines.push(line);
          lines.push(cont + c.comment.text);
        } else {
          lines.push((fresh ? cont : line + "  ") + c.comment.text);
        }
        line = cont;
        fresh = true;
      }
    });
    // A unit whose last fragment is followed by an inner comment has already broken its line.
    if (u.trailing) lines.push(fresh ? cont + u.trailing.text : line + "  " + u.trailing.text);
    else if (!fresh) lines.push(line);
  }
}

function firstPos(u: Unit): number {
  for (const f of u.frags) if (f.pos >= 0) return f.pos;
  return -1;
}

/** CRLF when most line breaks of the text are CRLF, else LF. */
function dominantEol(text: string): string {
  let crlf = 0;
  let lf = 0;
  for (let i = text.indexOf("\n"); i >= 0; i = text.indexOf("\n", i + 1)) {
    if (i > 0 && text[i - 1] === "\r") crlf++;
    else lf++;
  }
  return crlf > lf ? "\r\n" : "\n";
}
