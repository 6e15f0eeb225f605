/**
 * Tokens of the `.loss` notation (chevrotain lexer). Keyword tokens use `longer_alt: Identifier` so that
 * names like `index` or `lossy` stay identifiers. Comments are kept in their own group (the formatter and
 * documentation hovers need them); whitespace is skipped.
 */
import { createToken, Lexer, type TokenType } from "chevrotain";

const IDENT_RE = /[\p{L}_][\p{L}\p{N}_]*/uy;

/** Custom matcher: chevrotain drops the `u` flag of plain regex patterns, which Unicode letters need. */
function matchIdentifier(text: string, offset: number): RegExpExecArray | null {
  IDENT_RE.lastIndex = offset;
  return IDENT_RE.exec(text);
}

export const Identifier = createToken({
  name: "Identifier",
  pattern: { exec: matchIdentifier },
  line_breaks: false,
});

function keyword(name: string, word: string): TokenType {
  return createToken({ name, pattern: new RegExp(word), longer_alt: Identifier });
}

export const Param = keyword("Param", "param");
export const Def = keyword("Def", "def");
export const Loss = keyword("Loss", "loss");
export const In = keyword("In", "in");
export const If = keyword("If", "if");
export const Then = keyword("Then", "then");
export const Else = keyword("Else", "else");
export const And = keyword("And", "and");
export const Or = keyword("Or", "or");
export const Not = keyword("Not", "not");
export const Expect = keyword("Expect", "expect");
export const Canonical = keyword("Canonical", "canonical");

export const NumberLiteral = createToken({
  name: "NumberLiteral",
  pattern: /(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?/,
});

export const WhiteSpace = createToken({ name: "WhiteSpace", pattern: /[ \t\r\n\f\v\u00a0\ufeff]+/, group: Lexer.SKIPPED });
export const Comment = createToken({ name: "Comment", pattern: /#[^\r\n]*/, group: "comments" });

export const LessEq = createToken({ name: "LessEq", pattern: /<=/ });
export const GreaterEq = createToken({ name: "GreaterEq", pattern: />=/ });
export const Less = createToken({ name: "Less", pattern: /</ });
export const Greater = createToken({ name: "Greater", pattern: />/ });
export const Equals = createToken({ name: "Equals", pattern: /=/ });
export const Plus = createToken({ name: "Plus", pattern: /\+/ });
export const Minus = createToken({ name: "Minus", pattern: /-|\u2212/ });
export const Star = createToken({ name: "Star", pattern: /\*/ });
export const Slash = createToken({ name: "Slash", pattern: /\// });
export const Caret = createToken({ name: "Caret", pattern: /\^/ });
export const Comma = createToken({ name: "Comma", pattern: /,/ });
export const LParen = createToken({ name: "LParen", pattern: /\(/ });
export const RParen = createToken({ name: "RParen", pattern: /\)/ });
export const LBracket = createToken({ name: "LBracket", pattern: /\[/ });
export const RBracket = createToken({ name: "RBracket", pattern: /\]/ });
export const LBrace = createToken({ name: "LBrace", pattern: /\{/ });
export const RBrace = createToken({ name: "RBrace", pattern: /\}/ });

/** Order matters: whitespace first for speed, keywords before Identifier, two-char operators before one-char. */
export const allTokens: TokenType[] = [
  WhiteSpace,
  Comment,
  Param, Def, Loss, In, If, Then, Else, And, Or, Not, Expect, Canonical,
  Identifier,
  NumberLiteral,
  LessEq, GreaterEq, Less, Greater, Equals,
  Plus, Minus, Star, Slash, Caret, Comma,
  LParen, RParen, LBracket, RBracket, LBrace, RBrace,
];

/** The one lexer instance (chevrotain lexers are reusable and stateless between calls). */
export const lossLexer = new Lexer(allTokens, { positionTracking: "full", ensureOptimizations: false });

/** Words that may follow `expect` (contextual: they stay ordinary identifiers elsewhere). */
export const EXPECT_WORDS = ["proper", "strictly", "improper", "convex", "lambda", "exponent"] as const;
