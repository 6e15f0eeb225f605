/**
 * The semantic model of a `.loss` file: name resolution (global `param`s, loss-local parameters, `def`
 * helpers, built-ins, the clause variable), arity, the variable-of-clause rule, one primary form per loss,
 * duplicates, parameter defaults and ranges, recursion among helpers, and `expect` claims.
 * Partial input is fine: every field of the AST may be missing and nothing here throws.
 */
import type { Claim, DefinitionForm } from "../loss-model.js";
import { makeIssue, type Issue, type Span } from "../issue.js";
import type { DefDecl, DefineClause, ExpectClause, Expr, FileNode, LossDecl, ParamDecl } from "../syntax/ast.js";
import { forEachExpr } from "../syntax/ast.js";
import { BUILTINS, CONSTANTS } from "./builtins.js";
import { compileExpr, evalConstant, isCondition } from "./compile.js";
import { suggest } from "./suggest.js";

export type ClauseName = "l1" | "l0" | "bayes" | "weight" | "margin" | "link" | "inverse" | "threshold";

/** The variable each clause is written in (`l1`/`l0` may use either scale). */
export const CLAUSE_VARIABLES: Record<ClauseName, readonly ("q" | "v")[]> = {
  l1: ["q", "v"],
  l0: ["q", "v"],
  bayes: ["q"],
  weight: ["q"],
  margin: ["v"],
  link: ["q"],
  inverse: ["v"],
  threshold: [],
};

export const CLAUSE_DOCS: Record<ClauseName, string> = {
  l1: "partial loss when y = 1, as a function of the prediction q (or of the score v, with a link)",
  l0: "partial loss when y = 0, as a function of the prediction q (or of the score v, with a link)",
  bayes: "conditional Bayes risk H(q); alone it defines the loss by the Savage form, next to partials it is checked against them",
  weight: "weight function w(q) ≥ 0; defines the loss by l1(q) = ∫_q^1 (1−c)w(c)dc, l0(q) = ∫_0^q c·w(c)dc",
  margin: "margin function φ(v): loss φ(v) when y = 1 and φ(−v) when y = 0",
  link: "link ψ(q) mapping probabilities to scores v; `link = canonical` derives ψ with ψ' = w",
  inverse: "inverse link ψ⁻¹(v), checked against `link`",
  threshold: "decision threshold c ∈ (0, 1) for the cost-weighted regret bounds (default 1/2)",
};

export const CLAUSE_NAMES = Object.keys(CLAUSE_VARIABLES) as ClauseName[];

export type SymbolRef =
  | { kind: "global-param"; name: string }
  | { kind: "local-param"; loss: string; name: string }
  | { kind: "def"; name: string }
  | { kind: "def-param"; def: string; name: string }
  | { kind: "loss"; name: string }
  | { kind: "builtin"; name: string }
  | { kind: "constant"; name: string }
  | { kind: "variable"; name: string };

/** One occurrence of a name: its declaration or a use. Drives go-to-definition, references and rename. */
export interface Reference {
  span: Span;
  target: SymbolRef;
  isDeclaration: boolean;
}

export interface ParamInfo {
  decl: ParamDecl;
  value: number | null;
  lo: number | null;
  hi: number | null;
}

export interface DefInfo {
  decl: DefDecl;
  recursive: boolean;
  /** Globals and helpers the body uses (transitively through other helpers). */
  usedGlobals: Set<string>;
  usedDefs: Set<string>;
  hasErrors: boolean;
}

export interface ExpectInfo {
  clause: ExpectClause;
  claim: Claim | null;
}

export interface LossInfo {
  decl: LossDecl;
  name: string;
  form: DefinitionForm | null;
  clauses: Map<ClauseName, DefineClause>;
  expects: ExpectInfo[];
  localParams: Map<string, ParamInfo>;
  /** Globals the loss uses, directly or through helpers (in declaration order). */
  usedGlobals: string[];
  usedDefs: Set<string>;
  /** True when an error-level issue lies inside the loss or in something it uses: analysis is skipped. */
  hasErrors: boolean;
}

export interface SemanticModel {
  ast: FileNode;
  issues: Issue[];
  globals: Map<string, ParamInfo>;
  defs: Map<string, DefInfo>;
  losses: LossInfo[];
  references: Reference[];
}

const PRIMARY: ClauseName[] = ["l1", "l0", "bayes", "weight", "margin"];

export function analyseSemantics(ast: FileNode): SemanticModel {
  return new Resolver(ast).run();
}

class Resolver {
  private readonly issues: Issue[] = [];
  private readonly references: Reference[] = [];
  private readonly globals = new Map<string, ParamInfo>();
  private readonly defs = new Map<string, DefInfo>();
  private readonly losses: LossInfo[] = [];
  private readonly duplicateLosses = new Set<LossDecl>();

  constructor(private readonly ast: FileNode) {}

  run(): SemanticModel {
    const topNames = new Map<string, Span>();
    const lossNames = new Map<string, Span>();
    for (const item of this.ast.items) {
      if (item.kind === "loss") {
        // A second loss of the same name is not analysed: its report could not be told from the first's.
        if (lossNames.has(item.name.name)) this.duplicateLosses.add(item);
        this.declareUnique(lossNames, item.name.name, item.name.span, "loss");
        continue;
      }
      this.declareUnique(topNames, item.name.name, item.name.span, item.kind === "param" ? "parameter" : "helper");
      if (item.kind === "param") {
        if (!this.globals.has(item.name.name)) this.globals.set(item.name.name, this.paramInfo(item, "global"));
        this.references.push({ span: item.name.span, target: { kind: "global-param", name: item.name.name }, isDeclaration: true });
      } else {
        if (!this.defs.has(item.name.name)) {
          this.defs.set(item.name.name, { decl: item, recursive: false, usedGlobals: new Set(), usedDefs: new Set(), hasErrors: false });
        }
        this.references.push({ span: item.name.span, target: { kind: "def", name: item.name.name }, isDeclaration: true });
      }
    }
    for (const def of this.defs.values()) this.checkDef(def);
    this.checkRecursion();
    for (const item of this.ast.items) if (item.kind === "loss") this.losses.push(this.checkLoss(item));
    return { ast: this.ast, issues: this.issues, globals: this.globals, defs: this.defs, losses: this.losses, references: this.references };
  }

  private error(code: Parameters<typeof makeIssue>[0], message: string, span: Span, data?: Record<string, unknown>): void {
    this.issues.push(makeIssue(code, message, span, data ? { data } : {}));
  }

  private declareUnique(seen: Map<string, Span>, name: string, span: Span, what: string): void {
    const prev = seen.get(name);
    if (prev) {
      this.issues.push(makeIssue("duplicate-name", `\`${name}\` is already defined as a ${what}`, span, { related: [{ span: prev, message: "first definition" }] }));
    } else {
      seen.set(name, span);
    }
    if (BUILTINS.has(name) || CONSTANTS.has(name)) {
      this.issues.push(makeIssue("shadowed-name", `\`${name}\` hides the built-in of the same name`, span));
    }
  }

  private paramInfo(decl: ParamDecl, scope: "global" | "local"): ParamInfo {
    const info: ParamInfo = { decl, value: null, lo: null, hi: null };
    if (decl.name.name === "q" || decl.name.name === "v") {
      this.issues.push(makeIssue("shadowed-name", `\`${decl.name.name}\` is a clause variable; a ${scope} parameter of that name is hidden inside clauses`, decl.name.span));
    }
    info.value = this.constant(decl.value, "a parameter default");
    if (decl.range) {
      info.lo = this.constant(decl.range.lo, "a range bound");
      info.hi = this.constant(decl.range.hi, "a range bound");
      if (info.lo !== null && info.hi !== null) {
        if (info.lo > info.hi) {
          this.error("empty-range", `the range [${info.lo}, ${info.hi}] is empty: its lower end exceeds its upper end`, decl.range.span);
        } else if (info.value !== null && (info.value < info.lo || info.value > info.hi)) {
          this.error("default-out-of-range", `the default ${info.value} lies outside the range [${info.lo}, ${info.hi}]`, decl.value?.span ?? decl.name.span, {
            lo: info.lo, hi: info.hi, value: info.value,
          });
        }
      }
    }
    return info;
  }

  /** A constant expression: numbers, `pi`, `e`, operators and built-ins only. */
  private constant(e: Expr | null, what: string): number | null {
    if (!e || e.kind === "error") return null;
    let ok = true;
    forEachExpr(e, (x) => {
      if (x.kind === "name" && !CONSTANTS.has(x.name)) {
        ok = false;
        this.error("non-constant-expression", `${what} must be a constant; \`${x.name}\` is not`, x.span);
      } else if (x.kind === "name") {
        this.references.push({ span: x.span, target: { kind: "constant", name: x.name }, isDeclaration: false });
      } else if (x.kind === "call") {
        const b = BUILTINS.get(x.callee);
        if (!b) {
          ok = false;
          this.error("non-constant-expression", `${what} must be a constant; \`${x.callee}\` is not a built-in`, x.calleeSpan);
        } else if (b.arity !== x.args.length) {
          ok = false;
          this.arityError(x.callee, b.arity, x.args.length, x.span);
        } else {
          this.references.push({ span: x.calleeSpan, target: { kind: "builtin", name: x.callee }, isDeclaration: false });
        }
      }
    });
    if (!ok) return null;
    if (!this.checkTypes(e)) return null;
    const v = evalConstant(e);
    if (v === null || !Number.isFinite(v)) {
      this.error("non-constant-expression", `${what} must be a finite number`, e.span);
      return null;
    }
    return v;
  }

  private arityError(name: string, expected: number, got: number, span: Span): void {
    this.error("wrong-arity", `\`${name}\` takes ${expected} argument${expected === 1 ? "" : "s"} but is given ${got}`, span, { expected, got });
  }

  /** Checks that conditions and values are used in their places; returns false when something is wrong. */
  private checkTypes(e: Expr): boolean {
    let ok = true;
    const visitValue = (x: Expr): void => {
      if (x.kind === "paren") return visitValue(x.inner);
      if (isCondition(x)) {
        ok = false;
        this.error("condition-as-value", "a comparison is used where a number is expected; use `if … then … else …`", x.span);
        return visitCond(x);
      }
      switch (x.kind) {
        case "unary": return visitValue(x.operand);
        case "binary": visitValue(x.left); visitValue(x.right); return;
        case "call": x.args.forEach(visitValue); return;
        case "if": visitCond(x.cond); visitValue(x.then); visitValue(x.else); return;
        default: return;
      }
    };
    const visitCond = (x: Expr): void => {
      if (x.kind === "paren") return visitCond(x.inner);
      if (x.kind === "error") return;
      if (!isCondition(x)) {
        ok = false;
        this.error("value-as-condition", "a number is used where a condition is expected (for example `q < 0.5`)", x.span);
        return visitValue(x);
      }
      if (x.kind === "unary") return visitCond(x.operand);
      if (x.kind === "binary" && (x.op === "and" || x.op === "or")) {
        visitCond(x.left);
        visitCond(x.right);
        return;
      }
      if (x.kind === "binary") {
        visitValue(x.left);
        visitValue(x.right);
      }
    };
    // Iterative depth is bounded by the parser's nesting limit, so plain recursion is safe here.
    visitValue(e);
    return ok;
  }

  /**
   * Resolves every name and call in an expression against a scope; reports unknown names (with a
   * suggestion), wrong arity and wrong-scale variables. Returns false when an error was found.
   */
  private resolveExpr(
    e: Expr | null,
    scope: { variable: string | null; otherVariable: string | null; locals: Map<string, SymbolRef>; loss: LossInfo | null },
    used: { globals: Set<string>; defs: Set<string> },
  ): boolean {
    if (!e) return false;
    let ok = this.checkTypes(e);
    forEachExpr(e, (x) => {
      if (x.kind === "error") {
        ok = false;
      } else if (x.kind === "name") {
        const local = scope.locals.get(x.name);
        if (scope.variable !== null && x.name === scope.variable) {
          this.references.push({ span: x.span, target: { kind: "variable", name: x.name }, isDeclaration: false });
        } else if (local) {
          this.references.push({ span: x.span, target: local, isDeclaration: false });
        } else if (this.globals.has(x.name)) {
          used.globals.add(x.name);
          this.references.push({ span: x.span, target: { kind: "global-param", name: x.name }, isDeclaration: false });
        } else if (CONSTANTS.has(x.name)) {
          this.references.push({ span: x.span, target: { kind: "constant", name: x.name }, isDeclaration: false });
        } else if (scope.otherVariable !== null && x.name === scope.otherVariable) {
          ok = false;
          const mine = scope.variable;
          this.error(
            "wrong-variable",
            mine === null
              ? `\`${x.name}\` is a clause variable and cannot be used here`
              : `this clause is written in \`${mine}\`; \`${x.name}\` is the variable of the ${x.name === "v" ? "score" : "probability"} scale`,
            x.span,
            { expected: mine, found: x.name },
          );
        } else if (this.defs.has(x.name) || BUILTINS.has(x.name)) {
          ok = false;
          this.error("unknown-name", `\`${x.name}\` is a function; call it with arguments, e.g. \`${x.name}(…)\``, x.span);
        } else {
          ok = false;
          const candidates = [...scope.locals.keys(), ...this.globals.keys(), ...CONSTANTS.keys(), ...(scope.variable ? [scope.variable] : [])];
          const s = suggest(x.name, candidates);
          this.error("unknown-name", `unknown name \`${x.name}\`${s ? `; did you mean \`${s}\`?` : ""}`, x.span, s ? { suggestion: s } : undefined);
        }
      } else if (x.kind === "call") {
        const def = this.defs.get(x.callee);
        const builtin = BUILTINS.get(x.callee);
        if (def) {
          used.defs.add(x.callee);
          this.references.push({ span: x.calleeSpan, target: { kind: "def", name: x.callee }, isDeclaration: false });
          if (def.decl.params.length !== x.args.length) {
            ok = false;
            this.arityError(x.callee, def.decl.params.length, x.args.length, x.span);
          }
        } else if (builtin) {
          this.references.push({ span: x.calleeSpan, target: { kind: "builtin", name: x.callee }, isDeclaration: false });
          if (builtin.arity !== x.args.length) {
            ok = false;
            this.arityError(x.callee, builtin.arity, x.args.length, x.span);
          }
        } else {
          ok = false;
          const isValue = scope.locals.has(x.callee) || this.globals.has(x.callee) || x.callee === scope.variable;
          if (isValue) {
            this.error("unknown-function", `\`${x.callee}\` is not a function; write \`${x.callee} * (…)\` for a product`, x.calleeSpan);
          } else {
            const s = suggest(x.callee, [...BUILTINS.keys(), ...this.defs.keys()]);
            this.error("unknown-function", `unknown function \`${x.callee}\`${s ? `; did you mean \`${s}\`?` : ""}`, x.calleeSpan, s ? { suggestion: s } : undefined);
          }
        }
      }
    });
    return ok;
  }

  private checkDef(def: DefInfo): void {
    const d = def.decl;
    const locals = new Map<string, SymbolRef>();
    for (const p of d.params) {
      if (locals.has(p.name)) this.error("duplicate-name", `the helper \`${d.name.name}\` has two parameters named \`${p.name}\``, p.span);
      locals.set(p.name, { kind: "def-param", def: d.name.name, name: p.name });
      this.references.push({ span: p.span, target: { kind: "def-param", def: d.name.name, name: p.name }, isDeclaration: true });
    }
    const used = { globals: def.usedGlobals, defs: def.usedDefs };
    const ok = this.resolveExpr(d.body, { variable: null, otherVariable: null, locals, loss: null }, used);
    def.hasErrors = !ok;
  }

  /** Marks helpers that call themselves directly or through others, and closes `used` sets transitively. */
  private checkRecursion(): void {
    for (const [name, def] of this.defs) {
      const seen = new Set<string>();
      const stack = [...def.usedDefs];
      while (stack.length > 0) {
        const n = stack.pop()!;
        if (seen.has(n)) continue;
        seen.add(n);
        const other = this.defs.get(n);
        if (other) stack.push(...other.usedDefs);
      }
      if (seen.has(name)) {
        def.recursive = true;
        def.hasErrors = true;
        this.error("recursive-def", `the helper \`${name}\` calls itself${def.usedDefs.has(name) ? "" : " through other helpers"}; helpers cannot be recursive`, def.decl.name.span);
      }
      for (const n of seen) {
        const other = this.defs.get(n);
        if (!other) continue;
        def.usedDefs.add(n);
        for (const g of other.usedGlobals) def.usedGlobals.add(g);
      }
    }
    for (const def of this.defs.values()) {
      for (const n of def.usedDefs) if (this.defs.get(n)?.hasErrors) def.hasErrors = true;
    }
  }

  private checkLoss(decl: LossDecl): LossInfo {
    const before = this.issues.length;
    const info: LossInfo = {
      decl, name: decl.name.name, form: null, clauses: new Map(), expects: [], localParams: new Map(),
      usedGlobals: [], usedDefs: new Set(), hasErrors: false,
    };
    this.references.push({ span: decl.name.span, target: { kind: "loss", name: decl.name.name }, isDeclaration: true });
    const locals = new Map<string, SymbolRef>();
    for (const p of decl.params) {
      if (info.localParams.has(p.name.name)) {
        this.error("duplicate-name", `the loss \`${info.name}\` has two parameters named \`${p.name.name}\``, p.name.span);
        continue;
      }
      if (this.globals.has(p.name.name)) {
        this.issues.push(makeIssue("shadowed-name", `the loss parameter \`${p.name.name}\` hides the global parameter of the same name`, p.name.span, {
          related: [{ span: this.globals.get(p.name.name)!.decl.name.span, message: "global parameter" }],
        }));
      } else if (BUILTINS.has(p.name.name) || CONSTANTS.has(p.name.name)) {
        this.issues.push(makeIssue("shadowed-name", `\`${p.name.name}\` hides the built-in of the same name`, p.name.span));
      }
      info.localParams.set(p.name.name, this.paramInfo(p, "local"));
      const ref: SymbolRef = { kind: "local-param", loss: info.name, name: p.name.name };
      locals.set(p.name.name, ref);
      this.references.push({ span: p.name.span, target: ref, isDeclaration: true });
    }

    const used = { globals: new Set<string>(), defs: new Set<string>() };
    let expectIndex = 0;
    for (const clause of decl.clauses) {
      if (clause.kind === "expect") {
        info.expects.push({ clause, claim: this.claim(clause, expectIndex++) });
        continue;
      }
      const name = clause.name.name;
      if (!(CLAUSE_NAMES as string[]).includes(name)) {
        const s = suggest(name, CLAUSE_NAMES);
        this.error("unknown-clause", `unknown clause \`${name}\`${s ? `; did you mean \`${s}\`?` : ""}`, clause.name.span, s ? { suggestion: s } : undefined);
        continue;
      }
      const cname = name as ClauseName;
      if (info.clauses.has(cname)) {
        this.issues.push(makeIssue("duplicate-clause", `the clause \`${cname}\` is given twice`, clause.name.span, {
          related: [{ span: info.clauses.get(cname)!.name.span, message: "first definition" }],
        }));
        continue;
      }
      info.clauses.set(cname, clause);
      this.checkClause(info, cname, clause, locals, used);
    }
    this.checkForm(info);

    info.usedDefs = new Set(used.defs);
    const globals = new Set(used.globals);
    for (const d of used.defs) {
      const def = this.defs.get(d);
      if (!def) continue;
      for (const g of def.usedGlobals) globals.add(g);
      for (const n of def.usedDefs) info.usedDefs.add(n);
    }
    info.usedGlobals = [...this.globals.keys()].filter((g) => globals.has(g) && !info.localParams.has(g));
    const ownErrors = this.issues.slice(before).some((i) => i.severity === "error");
    const depErrors = [...info.usedDefs].some((d) => this.defs.get(d)?.hasErrors) ||
      info.usedGlobals.some((g) => this.globals.get(g)?.value === null) ||
      [...info.localParams.values()].some((p) => p.value === null);
    // A clause the parser left incomplete (its error is a parse issue, not a semantic one) cannot be compiled.
    const holes = [...info.clauses.values()].some((c) => !c.canonical && hasHole(c.value));
    info.hasErrors = ownErrors || depErrors || holes || this.duplicateLosses.has(decl);
    return info;
  }

  private checkClause(
    info: LossInfo,
    name: ClauseName,
    clause: DefineClause,
    locals: Map<string, SymbolRef>,
    used: { globals: Set<string>; defs: Set<string> },
  ): void {
    const allowed = CLAUSE_VARIABLES[name];
    if (clause.canonical) {
      if (name !== "link") this.error("unknown-name", "`canonical` is only meaningful as `link = canonical`", clause.span);
      if (clause.variable) this.error("clause-variable-name", "write `link = canonical` without a variable", clause.variable.span);
      return;
    }
    let variable: string | null = null;
    if (allowed.length === 0) {
      if (clause.variable) this.error("clause-variable-name", `\`${name}\` takes no variable: write \`${name} = …\``, clause.variable.span);
    } else if (!clause.variable) {
      this.error("clause-variable-name", `write the clause with its variable: \`${name}(${allowed[0]}) = …\``, clause.name.span, { expected: allowed[0] });
      variable = allowed[0]!;
    } else if (!(allowed as string[]).includes(clause.variable.name)) {
      const want = allowed.join("` or `");
      this.error("clause-variable-name", `\`${name}\` is written in \`${want}\`, not \`${clause.variable.name}\``, clause.variable.span, { expected: allowed[0], found: clause.variable.name });
      variable = allowed[0]!;
    } else {
      variable = clause.variable.name;
    }
    if (clause.variable) this.references.push({ span: clause.variable.span, target: { kind: "variable", name: clause.variable.name }, isDeclaration: true });
    const other = variable === "q" ? "v" : variable === "v" ? "q" : null;
    const resolved = this.resolveExpr(clause.value, { variable, otherVariable: variable === null ? null : other, locals, loss: info }, used);
    if (name === "threshold" && clause.value && resolved) {
      // Checked at the defaults here; across ranges by the engine.
      // Any constant expression counts (`-0.25`, `(1.5)`, `pi/4`); one that uses parameters yields null.
      const c = evalConstant(clause.value);
      if (c !== null && !(c > 0 && c < 1)) {
        this.error("threshold-out-of-range", `the threshold must lie strictly between 0 and 1; it is ${c}`, clause.value.span);
      } else if (c === null) {
        const d = this.atDefaults(clause.value, info);
        if (d !== null && !(d > 0 && d < 1)) {
          this.error("threshold-out-of-range", `the threshold must lie strictly between 0 and 1; at the parameter defaults it is ${d}`, clause.value.span);
        }
      }
    }
  }

  /** Evaluates a parameter expression at the defaults (loss-local parameters hide globals); null when it cannot. */
  private atDefaults(e: Expr, info: LossInfo): number | null {
    const names: string[] = [];
    const values: number[] = [];
    for (const [n, p] of [...info.localParams, ...[...this.globals].filter(([g]) => !info.localParams.has(g))]) {
      if (p.value === null) continue;
      names.push(n);
      values.push(p.value);
    }
    try {
      const f = compileExpr(e, { variable: null, paramSlots: new Map(names.map((n, i) => [n, i])), defs: new Map() });
      return f(NaN, Float64Array.from(values));
    } catch {
      return null;
    }
  }

  private checkForm(info: LossInfo): void {
    const has = (n: ClauseName) => info.clauses.has(n);
    const forms: { form: DefinitionForm; span: Span }[] = [];
    const l1 = info.clauses.get("l1");
    const l0 = info.clauses.get("l0");
    if (l1 || l0) {
      if (!l1 || !l0) {
        const present = (l1 ?? l0)!;
        const missing = l1 ? "l0" : "l1";
        this.error("missing-partial", `\`${present.name.name}\` is given without \`${missing}\`; a loss needs both partial losses`, present.name.span, { missing });
      }
      const vars = [l1?.variable?.name, l0?.variable?.name].filter((x): x is string => x !== undefined);
      const score = vars.includes("v");
      if (l1 && l0 && new Set(vars).size > 1) {
        this.error("wrong-variable", "`l1` and `l0` must be written in the same variable (both `q` or both `v`)", l0.variable?.span ?? l0.name.span);
      }
      forms.push({ form: score ? "score-partials" : "partials", span: (l1 ?? l0)!.name.span });
      if (score && !has("link")) {
        this.error("score-partials-need-link", "partial losses written in the score `v` need a `link(q) = …` clause to relate scores to probabilities", (l1 ?? l0)!.name.span);
      }
      if (score && info.clauses.get("link")?.canonical) {
        this.error("score-partials-need-link", "partial losses in the score need an explicit link; `link = canonical` is derived from partials in `q`", info.clauses.get("link")!.span);
      }
    }
    if (has("weight")) forms.push({ form: "weight", span: info.clauses.get("weight")!.name.span });
    if (has("margin")) forms.push({ form: "margin", span: info.clauses.get("margin")!.name.span });
    if (forms.length === 0 && has("bayes")) forms.push({ form: "bayes", span: info.clauses.get("bayes")!.name.span });
    // The form written first is the loss's; each later one is reported against it.
    forms.sort((a, b) => a.span.start - b.span.start);
    if (forms.length === 0) {
      this.error("missing-primary-form", `the loss \`${info.name}\` has no definition: give \`l1\` and \`l0\`, \`bayes\`, \`weight\` or \`margin\``, info.decl.name.span);
      return;
    }
    if (forms.length > 1) {
      for (const f of forms.slice(1)) {
        this.error("multiple-primary-forms", `the loss \`${info.name}\` is already defined by its ${describeForm(forms[0]!.form)}; a loss has exactly one primary form`, f.span);
      }
    }
    info.form = forms[0]!.form;
    if (info.form === "margin" && has("link")) {
      this.issues.push(makeIssue("shadowed-name", "a margin loss implies its own link; the `link` clause is checked against it", info.clauses.get("link")!.name.span, { severity: "information" }));
    }
    void PRIMARY;
  }

  private claim(clause: ExpectClause, index: number): Claim | null {
    const words = clause.words.map((w) => w.name).join(" ");
    const value = clause.value ? this.constant(clause.value, "the value of a claim") : null;
    const op = clause.op?.text ?? null;
    const bad = (msg: string): null => {
      this.error("invalid-expect", msg, clause.span);
      return null;
    };
    const noValue = (kind: "proper" | "strictly-proper" | "improper" | "convex"): Claim | null =>
      op ? bad(`\`expect ${words}\` takes no comparison`) : { index, kind };
    switch (words) {
      case "proper": return noValue("proper");
      case "strictly proper": return noValue("strictly-proper");
      case "improper": return noValue("improper");
      case "convex": return noValue("convex");
      case "lambda":
      case "exponent":
        if (op !== ">=") return bad(`write \`expect ${words} >= <number>\``);
        if (value === null) return null;
        return words === "lambda" ? { index, kind: "lambda-at-least", value } : { index, kind: "exponent-at-least", value };
      default: {
        const known = ["proper", "strictly proper", "improper", "convex", "lambda >= …", "exponent >= …"];
        const s = suggest(words, known);
        return bad(`unknown claim \`expect ${words}\`${s ? ` (did you mean \`expect ${s}\`?)` : ""}; the claims are ${known.map((k) => `\`${k}\``).join(", ")}`);
      }
    }
  }
}

/** True when an expression is missing or contains a hole left by error recovery. */
function hasHole(e: Expr | null): boolean {
  if (!e) return true;
  let found = false;
  forEachExpr(e, (x) => {
    if (x.kind === "error") found = true;
  });
  return found;
}

export function describeForm(form: DefinitionForm): string {
  switch (form) {
    case "partials": return "partial losses";
    case "score-partials": return "partial losses in the score";
    case "bayes": return "Bayes risk";
    case "weight": return "weight function";
    case "margin": return "margin function";
  }
}
