/**
 * A stable, indented text dump of a parsed `.loss` file, used by the golden parser tests and by the
 * formatter's round-trip checks. One node per line, children indented by two spaces, spans written as
 * `@start..end`, and the issues listed last as `error start..end code: message`.
 */
import type { Clause, Expr, FileNode, Ident, Item, ParamDecl, RangeDecl } from "../../server/src/syntax/ast.js";
import type { Issue, Span } from "../../server/src/issue.js";

/** Options of {@link dumpTree}. */
export interface DumpOptions {
  /** Write `@start..end` after every node (default true); false gives a dump that compares ASTs modulo spans. */
  spans?: boolean;
}

/** Dumps a file AST (and optionally its issues) as indented text ending with a newline. */
export function dumpTree(ast: FileNode, issues: readonly Issue[] = [], options: DumpOptions = {}): string {
  const withSpans = options.spans ?? true;
  const lines: string[] = [];
  const at = (s: Span | null | undefined): string => (withSpans && s ? ` @${s.start}..${s.end}` : "");
  const emit = (depth: number, text: string): void => {
    lines.push("  ".repeat(depth) + text);
  };

  const ident = (depth: number, label: string, id: Ident | null): void => {
    emit(depth, id ? `${label} ${id.name}${at(id.span)}` : `${label} null`);
  };

  // Expressions are dumped with an explicit stack so that any depth the parser accepts can be dumped.
  const expr = (depth: number, label: string, root: Expr | null): void => {
    const stack: { e: Expr | null; depth: number; label: string }[] = [{ e: root, depth, label }];
    while (stack.length > 0) {
      const { e, depth: d, label: l } = stack.pop()!;
      const prefix = l ? `${l}: ` : "";
      if (!e) {
        emit(d, `${prefix}null`);
        continue;
      }
      const children: { e: Expr; label: string }[] = [];
      let head: string;
      switch (e.kind) {
        case "number":
          head = `number ${e.text}${String(e.value) === e.text ? "" : ` (= ${e.value})`}`;
          break;
        case "name":
          head = `name ${e.name}`;
          break;
        case "call":
          head = `call ${e.callee}/${e.args.length}`;
          e.args.forEach((a) => children.push({ e: a, label: "" }));
          break;
        case "unary":
          head = `unary ${e.op}`;
          children.push({ e: e.operand, label: "" });
          break;
        case "binary":
          head = `binary ${e.op}`;
          children.push({ e: e.left, label: "" }, { e: e.right, label: "" });
          break;
        case "if":
          head = "if";
          children.push({ e: e.cond, label: "cond" }, { e: e.then, label: "then" }, { e: e.else, label: "else" });
          break;
        case "paren":
          head = "paren";
          children.push({ e: e.inner, label: "" });
          break;
        case "error":
          head = "error-hole";
          break;
      }
      emit(d, `${prefix}${head}${at(e.span)}${e.kind === "call" && withSpans ? ` callee${at(e.calleeSpan)}` : ""}`);
      for (let i = children.length - 1; i >= 0; i--) stack.push({ e: children[i]!.e, depth: d + 1, label: children[i]!.label });
    }
  };

  const range = (depth: number, r: RangeDecl | null): void => {
    if (!r) return;
    emit(depth, `range${at(r.span)}`);
    expr(depth + 1, "lo", r.lo);
    expr(depth + 1, "hi", r.hi);
  };

  const doc = (depth: number, text: string | null): void => {
    if (text !== null) emit(depth, `doc ${JSON.stringify(text)}`);
  };

  const param = (depth: number, p: ParamDecl): void => {
    emit(depth, `param ${p.name.name} ${p.global ? "global" : "local"}${at(p.span)}`);
    doc(depth + 1, p.doc);
    ident(depth + 1, "ident", p.name);
    expr(depth + 1, "value", p.value);
    range(depth + 1, p.range);
  };

  const clause = (depth: number, c: Clause): void => {
    if (c.kind === "expect") {
      emit(depth, `expect ${c.words.map((w) => w.name).join(" ")}`.trimEnd() + at(c.span));
      c.words.forEach((w) => ident(depth + 1, "word", w));
      if (c.op) emit(depth + 1, `op ${c.op.text}${at(c.op.span)}`);
      if (c.op || c.value) expr(depth + 1, "value", c.value);
      return;
    }
    emit(depth, `clause ${c.name.name}${c.variable ? `(${c.variable.name})` : ""}${c.canonical ? " canonical" : ""}${at(c.span)}`);
    ident(depth + 1, "ident", c.name);
    if (c.variable) ident(depth + 1, "variable", c.variable);
    if (!c.canonical) expr(depth + 1, "value", c.value);
  };

  const item = (depth: number, it: Item): void => {
    switch (it.kind) {
      case "param":
        param(depth, it);
        break;
      case "def":
        emit(depth, `def ${it.name.name}(${it.params.map((p) => p.name).join(", ")})${at(it.span)}`);
        doc(depth + 1, it.doc);
        ident(depth + 1, "ident", it.name);
        it.params.forEach((p) => ident(depth + 1, "arg", p));
        expr(depth + 1, "body", it.body);
        break;
      case "loss":
        emit(depth, `loss ${it.name.name}${at(it.span)}`);
        doc(depth + 1, it.doc);
        ident(depth + 1, "ident", it.name);
        it.params.forEach((p) => param(depth + 1, p));
        it.clauses.forEach((c) => clause(depth + 1, c));
        break;
    }
  };

  emit(0, `file${at(ast.span)}`);
  ast.comments.forEach((c) => emit(1, `comment ${JSON.stringify(c.text)}${at(c.span)}`));
  ast.items.forEach((it) => item(1, it));
  issues.forEach((i) => emit(0, `error ${i.span.start}..${i.span.end} ${i.code}: ${i.message}`));
  return lines.join("\n") + "\n";
}
