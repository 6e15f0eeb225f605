/**
 * The grammar of the `.loss` notation as a chevrotain CstParser: grammar only, no semantics.
 * One parser instance is shared (build once, reset `input` per document); error recovery is on, so a
 * broken document still yields a partial CST plus errors, never an exception.
 */
import { CstParser, EOF, type CstNode, type IToken } from "chevrotain";
import * as T from "./tokens.js";

class LossParser extends CstParser {
  constructor() {
    super(T.allTokens, { recoveryEnabled: true, nodeLocationTracking: "full", maxLookahead: 3 });
    this.performSelfAnalysis();
  }

  public file = this.RULE("file", () => {
    this.MANY(() => this.SUBRULE(this.item));
  });

  /** One top-level item; the service splits a file at `param`/`def`/`loss` keywords and parses each chunk. */
  public item = this.RULE("item", () => {
    this.OR([
      { ALT: () => this.SUBRULE(this.paramDecl) },
      { ALT: () => this.SUBRULE(this.defDecl) },
      { ALT: () => this.SUBRULE(this.lossDecl) },
    ]);
  });

  /** `param c = 0.2 in [0.01, 0.99]` (also used for loss-local parameters, without the keyword). */
  private paramDecl = this.RULE("paramDecl", () => {
    this.CONSUME(T.Param);
    this.SUBRULE(this.paramBody);
  });

  private paramBody = this.RULE("paramBody", () => {
    this.CONSUME(T.Identifier, { LABEL: "name" });
    this.CONSUME(T.Equals);
    this.SUBRULE(this.expression, { LABEL: "value" });
    this.OPTION(() => this.SUBRULE(this.range));
  });

  private range = this.RULE("range", () => {
    this.CONSUME(T.In);
    this.CONSUME(T.LBracket);
    this.SUBRULE(this.expression, { LABEL: "lo" });
    this.CONSUME(T.Comma);
    this.SUBRULE2(this.expression, { LABEL: "hi" });
    this.CONSUME(T.RBracket);
  });

  /** `def s(v) = 1 / (1 + exp(-2*v))` */
  private defDecl = this.RULE("defDecl", () => {
    this.CONSUME(T.Def);
    this.CONSUME(T.Identifier, { LABEL: "name" });
    this.CONSUME(T.LParen);
    this.MANY_SEP({ SEP: T.Comma, DEF: () => this.CONSUME2(T.Identifier, { LABEL: "params" }) });
    this.CONSUME(T.RParen);
    this.CONSUME(T.Equals);
    this.SUBRULE(this.expression, { LABEL: "body" });
  });

  /** `loss name(a = 1 in [0, 2], …) { clause* }` */
  private lossDecl = this.RULE("lossDecl", () => {
    this.CONSUME(T.Loss);
    this.CONSUME(T.Identifier, { LABEL: "name" });
    this.OPTION(() => {
      this.CONSUME(T.LParen);
      this.MANY_SEP({ SEP: T.Comma, DEF: () => this.SUBRULE(this.paramBody, { LABEL: "params" }) });
      this.CONSUME(T.RParen);
    });
    this.CONSUME(T.LBrace);
    this.MANY(() => this.SUBRULE(this.clause));
    this.CONSUME(T.RBrace);
  });

  private clause = this.RULE("clause", () => {
    this.OR([
      { ALT: () => this.SUBRULE(this.expectClause) },
      { ALT: () => this.SUBRULE(this.defineClause) },
    ]);
  });

  /** `l1(q) = …`, `threshold = …`, `link = canonical` */
  private defineClause = this.RULE("defineClause", () => {
    this.CONSUME(T.Identifier, { LABEL: "name" });
    this.OPTION(() => {
      this.CONSUME(T.LParen);
      this.CONSUME2(T.Identifier, { LABEL: "variable" });
      this.CONSUME(T.RParen);
    });
    this.CONSUME(T.Equals);
    this.OR([
      { ALT: () => this.CONSUME(T.Canonical) },
      { ALT: () => this.SUBRULE(this.expression, { LABEL: "value" }) },
    ]);
  });

  /** `expect strictly proper`, `expect lambda >= 2`. Words are contextual identifiers on the same line. */
  private expectClause = this.RULE("expectClause", () => {
    const kw = this.CONSUME(T.Expect);
    this.MANY({
      GATE: () => this.LA(1).tokenType === T.Identifier && sameLine(kw, this.LA(1)),
      DEF: () => this.CONSUME(T.Identifier, { LABEL: "words" }),
    });
    this.OPTION(() => {
      this.OR([
        { ALT: () => this.CONSUME(T.GreaterEq, { LABEL: "op" }) },
        { ALT: () => this.CONSUME(T.LessEq, { LABEL: "op" }) },
        { ALT: () => this.CONSUME(T.Greater, { LABEL: "op" }) },
        { ALT: () => this.CONSUME(T.Less, { LABEL: "op" }) },
      ]);
      this.SUBRULE(this.expression, { LABEL: "value" });
    });
  });

  // Expressions, loosest first.
  public expression = this.RULE("expression", () => {
    this.SUBRULE(this.orExpr);
  });

  private orExpr = this.RULE("orExpr", () => {
    this.SUBRULE(this.andExpr, { LABEL: "operands" });
    this.MANY(() => {
      this.CONSUME(T.Or, { LABEL: "ops" });
      this.SUBRULE2(this.andExpr, { LABEL: "operands" });
    });
  });

  private andExpr = this.RULE("andExpr", () => {
    this.SUBRULE(this.notExpr, { LABEL: "operands" });
    this.MANY(() => {
      this.CONSUME(T.And, { LABEL: "ops" });
      this.SUBRULE2(this.notExpr, { LABEL: "operands" });
    });
  });

  private notExpr = this.RULE("notExpr", () => {
    this.OR([
      {
        ALT: () => {
          this.CONSUME(T.Not, { LABEL: "op" });
          this.SUBRULE(this.notExpr, { LABEL: "operand" });
        },
      },
      { ALT: () => this.SUBRULE(this.comparison, { LABEL: "operand" }) },
    ]);
  });

  private comparison = this.RULE("comparison", () => {
    this.SUBRULE(this.additive, { LABEL: "operands" });
    this.OPTION(() => {
      this.OR([
        { ALT: () => this.CONSUME(T.LessEq, { LABEL: "ops" }) },
        { ALT: () => this.CONSUME(T.GreaterEq, { LABEL: "ops" }) },
        { ALT: () => this.CONSUME(T.Less, { LABEL: "ops" }) },
        { ALT: () => this.CONSUME(T.Greater, { LABEL: "ops" }) },
      ]);
      this.SUBRULE2(this.additive, { LABEL: "operands" });
    });
  });

  private additive = this.RULE("additive", () => {
    this.SUBRULE(this.multiplicative, { LABEL: "operands" });
    this.MANY(() => {
      this.OR([
        { ALT: () => this.CONSUME(T.Plus, { LABEL: "ops" }) },
        { ALT: () => this.CONSUME(T.Minus, { LABEL: "ops" }) },
      ]);
      this.SUBRULE2(this.multiplicative, { LABEL: "operands" });
    });
  });

  private multiplicative = this.RULE("multiplicative", () => {
    this.SUBRULE(this.unary, { LABEL: "operands" });
    this.MANY(() => {
      this.OR([
        { ALT: () => this.CONSUME(T.Star, { LABEL: "ops" }) },
        { ALT: () => this.CONSUME(T.Slash, { LABEL: "ops" }) },
      ]);
      this.SUBRULE2(this.unary, { LABEL: "operands" });
    });
  });

  /** Unary minus binds looser than `^`: `-q^2` is `-(q^2)`. */
  private unary = this.RULE("unary", () => {
    this.OR([
      {
        ALT: () => {
          this.OR2([
            { ALT: () => this.CONSUME(T.Minus, { LABEL: "op" }) },
            { ALT: () => this.CONSUME(T.Plus, { LABEL: "op" }) },
          ]);
          this.SUBRULE(this.unary, { LABEL: "operand" });
        },
      },
      { ALT: () => this.SUBRULE(this.power, { LABEL: "operand" }) },
    ]);
  });

  /** Right-associative `^`; the exponent may carry a sign (`q^-2`). */
  private power = this.RULE("power", () => {
    this.SUBRULE(this.atom, { LABEL: "base" });
    this.OPTION(() => {
      this.CONSUME(T.Caret);
      this.SUBRULE(this.unary, { LABEL: "exponent" });
    });
  });

  private atom = this.RULE("atom", () => {
    this.OR([
      { ALT: () => this.CONSUME(T.NumberLiteral, { LABEL: "number" }) },
      { ALT: () => this.SUBRULE(this.callOrName) },
      {
        ALT: () => {
          this.CONSUME(T.LParen);
          this.SUBRULE(this.expression, { LABEL: "inner" });
          this.CONSUME(T.RParen);
        },
      },
      { ALT: () => this.SUBRULE(this.ifExpr) },
    ]);
  });

  /** A call's `(` must follow its name on the same line, so a clause on the next line is never an argument list. */
  private callOrName = this.RULE("callOrName", () => {
    const name = this.CONSUME(T.Identifier, { LABEL: "name" });
    this.OPTION({
      GATE: () => sameLine(name, this.LA(1)),
      DEF: () => {
        this.CONSUME(T.LParen);
        this.MANY_SEP({ SEP: T.Comma, DEF: () => this.SUBRULE(this.expression, { LABEL: "args" }) });
        this.CONSUME(T.RParen);
      },
    });
  });

  private ifExpr = this.RULE("ifExpr", () => {
    this.CONSUME(T.If);
    this.SUBRULE(this.expression, { LABEL: "cond" });
    this.CONSUME(T.Then);
    this.SUBRULE2(this.expression, { LABEL: "then" });
    this.CONSUME(T.Else);
    this.SUBRULE3(this.expression, { LABEL: "else" });
  });
}

function sameLine(a: IToken, b: IToken): boolean {
  if (b.tokenType === EOF) return false;
  return a.endLine !== undefined && b.startLine !== undefined && a.endLine === b.startLine;
}

/** The one parser instance. */
export const lossParser = new LossParser();

export type { CstNode };
