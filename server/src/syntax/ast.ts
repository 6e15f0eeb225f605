/**
 * The typed AST of a `.loss` file. Every node carries its source span (UTF-16 offsets). Fields are
 * nullable where error recovery can leave a hole; every consumer must tolerate them.
 */
import type { Span } from "../issue.js";

export type BinaryOp = "+" | "-" | "*" | "/" | "^" | "<" | "<=" | ">" | ">=" | "and" | "or";
export type UnaryOp = "-" | "+" | "not";

export type Expr =
  | { kind: "number"; value: number; text: string; span: Span }
  | { kind: "name"; name: string; span: Span }
  | { kind: "call"; callee: string; calleeSpan: Span; args: Expr[]; span: Span }
  | { kind: "unary"; op: UnaryOp; operand: Expr; span: Span }
  | { kind: "binary"; op: BinaryOp; left: Expr; right: Expr; span: Span }
  | { kind: "if"; cond: Expr; then: Expr; else: Expr; span: Span }
  | { kind: "paren"; inner: Expr; span: Span }
  /** A hole left by error recovery. */
  | { kind: "error"; span: Span };

export interface Ident {
  name: string;
  span: Span;
}

export interface RangeDecl {
  lo: Expr | null;
  hi: Expr | null;
  span: Span;
}

export interface ParamDecl {
  kind: "param";
  name: Ident;
  value: Expr | null;
  range: RangeDecl | null;
  /** Text of the comment block directly above (global params only). */
  doc: string | null;
  /** True for `param` items at top level, false for loss-local parameters. */
  global: boolean;
  span: Span;
}

export interface DefDecl {
  kind: "def";
  name: Ident;
  params: Ident[];
  body: Expr | null;
  doc: string | null;
  span: Span;
}

export interface DefineClause {
  kind: "clause";
  name: Ident;
  /** The declared variable, e.g. `q` in `l1(q)`; null for `threshold = …` and `link = canonical`. */
  variable: Ident | null;
  value: Expr | null;
  /** `link = canonical`. */
  canonical: boolean;
  span: Span;
}

export interface ExpectClause {
  kind: "expect";
  words: Ident[];
  op: { text: string; span: Span } | null;
  value: Expr | null;
  span: Span;
}

export type Clause = DefineClause | ExpectClause;

export interface LossDecl {
  kind: "loss";
  name: Ident;
  params: ParamDecl[];
  clauses: Clause[];
  doc: string | null;
  span: Span;
}

export type Item = ParamDecl | DefDecl | LossDecl;

export interface CommentToken {
  text: string;
  span: Span;
}

export interface FileNode {
  items: Item[];
  comments: CommentToken[];
  span: Span;
}

/** Visits every sub-expression (pre-order), iteratively so deep trees cannot overflow the stack. */
export function forEachExpr(root: Expr, visit: (e: Expr) => void): void {
  const stack: Expr[] = [root];
  while (stack.length > 0) {
    const e = stack.pop()!;
    visit(e);
    switch (e.kind) {
      case "call":
        for (let i = e.args.length - 1; i >= 0; i--) stack.push(e.args[i]!);
        break;
      case "unary":
        stack.push(e.operand);
        break;
      case "binary":
        stack.push(e.right, e.left);
        break;
      case "if":
        stack.push(e.else, e.then, e.cond);
        break;
      case "paren":
        stack.push(e.inner);
        break;
      default:
        break;
    }
  }
}

/** Strips parentheses nodes (they only matter to the formatter). */
export function unparen(e: Expr): Expr {
  while (e.kind === "paren") e = e.inner;
  return e;
}
