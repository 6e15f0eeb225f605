/**
 * Builds the engine's `LossFamily` from a checked loss: each clause is inlined (helpers expanded),
 * differentiated symbolically, and compiled to closures over a parameter vector. The family instantiates
 * `LossSpec`s at any parameter values; the engine never sees text.
 */
import type { Claim, LossFamily, LossSpec, ParamRange, RealFn } from "../loss-model.js";
import { forEachExpr, type Expr } from "../syntax/ast.js";
import { compileExpr, type Compiled } from "./compile.js";
import type { ClauseName, LossInfo, SemanticModel } from "./model.js";
import { differentiate, inlineDefs, NotDifferentiable } from "./symbolic.js";

/** A clause in closed form: the expanded expression and its first two derivatives (null when no rule applies). */
export interface ClauseForms {
  variable: string;
  expr: Expr;
  d1: Expr | null;
  d2: Expr | null;
}

export interface CompiledLoss {
  family: LossFamily;
  /** Expanded and differentiated clause expressions (for hovers, quick fixes and code generation). */
  forms: Partial<Record<ClauseName, ClauseForms>>;
  /** Parameter names in vector order. */
  paramNames: string[];
}

const DEFAULT_THRESHOLD = 0.5;

/** Expanded helper bodies by name, for inlining. */
export function helperBodies(model: SemanticModel): Map<string, { params: string[]; body: Expr }> {
  const out = new Map<string, { params: string[]; body: Expr }>();
  for (const [n, d] of model.defs) if (d.decl.body && !d.recursive) out.set(n, { params: d.decl.params.map((p) => p.name), body: d.decl.body });
  return out;
}

/** Returns null when the loss has errors (the semantic issues explain why). */
export function compileLoss(model: SemanticModel, loss: LossInfo, options: { defaultThreshold?: number } = {}): CompiledLoss | null {
  const fallbackThreshold = options.defaultThreshold !== undefined && options.defaultThreshold > 0 && options.defaultThreshold < 1 ? options.defaultThreshold : DEFAULT_THRESHOLD;
  if (loss.hasErrors || loss.form === null) return null;
  const params: ParamRange[] = [];
  const paramNames: string[] = [];
  for (const [n, info] of loss.localParams) {
    params.push(range(n, info.value!, info.lo, info.hi));
    paramNames.push(n);
  }
  for (const g of loss.usedGlobals) {
    const info = model.globals.get(g)!;
    params.push(range(g, info.value!, info.lo, info.hi));
    paramNames.push(g);
  }
  const slots = new Map(paramNames.map((n, i) => [n, i]));
  const defs = helperBodies(model);
  const forms: Partial<Record<ClauseName, ClauseForms>> = {};
  const compiled: Partial<Record<ClauseName, { f: Compiled; d1: Compiled | null; d2: Compiled | null }>> = {};
  const scope = (variable: string | null) => ({ variable, paramSlots: slots, defs: new Map() });

  for (const [name, clause] of loss.clauses) {
    if (clause.canonical || !clause.value) continue;
    const variable = clause.variable?.name ?? (name === "threshold" ? "" : "q");
    const expr = inlineDefs(clause.value, defs);
    let d1: Expr | null = null;
    let d2: Expr | null = null;
    if (variable) {
      try {
        d1 = differentiate(expr, variable);
        d2 = differentiate(d1, variable);
      } catch (err) {
        if (!(err instanceof NotDifferentiable)) throw err;
      }
    }
    forms[name] = { variable, expr, d1, d2 };
    compiled[name] = {
      f: compileExpr(expr, scope(variable || null)),
      d1: d1 ? compileExpr(d1, scope(variable)) : null,
      d2: d2 ? compileExpr(d2, scope(variable)) : null,
    };
  }

  // Parameters that appear only in `threshold` cannot change the partial losses.
  const lossNames = new Set<string>();
  for (const [name, f] of Object.entries(forms)) {
    if (name === "threshold" || !f) continue;
    forEachExpr(f.expr, (x) => {
      if (x.kind === "name") lossNames.add(x.name);
    });
  }
  params.forEach((p) => {
    if (!lossNames.has(p.name)) p.thresholdOnly = true;
  });

  const claims: Claim[] = loss.expects.map((e) => e.claim).filter((c): c is Claim => c !== null);
  const form = loss.form;
  const canonicalLink = loss.clauses.get("link")?.canonical === true;
  const family: LossFamily = {
    name: loss.name,
    form,
    params,
    claims,
    instantiate(values: Record<string, number>): LossSpec {
      const p = new Float64Array(paramNames.length);
      paramNames.forEach((n, i) => {
        // Own properties only: `values.constructor` or `values.__proto__` of a plain object are inherited
        // members, not values, and would make a parameter of that name NaN.
        p[i] = (Object.prototype.hasOwnProperty.call(values, n) ? values[n] : undefined) ?? params[i]!.default;
      });
      const bind = (c: Compiled | null | undefined): RealFn | undefined => (c ? (x: number) => c(x, p) : undefined);
      const threshold = compiled.threshold ? compiled.threshold.f(NaN, p) : fallbackThreshold;
      const spec: LossSpec = { name: loss.name, form, params: Object.fromEntries(paramNames.map((n, i) => [n, p[i]!])), threshold };
      const set = (clause: ClauseName, f: keyof LossSpec, d1: keyof LossSpec | null, d2: keyof LossSpec | null) => {
        const c = compiled[clause];
        if (!c) return;
        (spec as unknown as Record<string, unknown>)[f] = bind(c.f);
        if (d1 && c.d1) (spec as unknown as Record<string, unknown>)[d1] = bind(c.d1);
        if (d2 && c.d2) (spec as unknown as Record<string, unknown>)[d2] = bind(c.d2);
      };
      set("l1", "l1", "dl1", "d2l1");
      set("l0", "l0", "dl0", "d2l0");
      set("bayes", "bayes", "dbayes", "d2bayes");
      set("weight", "weight", "dweight", null);
      set("margin", "margin", "dmargin", "d2margin");
      set("link", "link", "dlink", "d2link");
      set("inverse", "inverse", null, null);
      if (canonicalLink) spec.canonicalLink = true;
      return spec;
    },
  };
  return { family, forms, paramNames };
}

function range(name: string, value: number, lo: number | null, hi: number | null): ParamRange {
  const r: ParamRange = { name, default: value };
  if (lo !== null) r.lo = lo;
  if (hi !== null) r.hi = hi;
  return r;
}
