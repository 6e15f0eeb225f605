/**
 * The target-neutral lowering of a checked loss to "per-sample loss + gradient" expressions: every
 * definition form becomes two expressions in the prediction variable (the loss when y = 1 and when y = 0),
 * their derivatives, the clamping the emitters must apply, and the header facts (engine figures,
 * parameters, threshold). Emitters only print what this module decides.
 *
 * Forms: partials on q as written; score partials with their link; a Bayes risk through the Savage form
 * l1 = H + (1−q)H', l0 = H − qH' (Savage 1971, via Reid & Williamson 2010, "Composite Binary Losses",
 * JMLR 11, Thm 4); a weight through its integral form (RW10 Thm 6); a margin φ as
 * φ(v) for y = 1 and φ(−v) for y = 0. Probability input and score input are related through the link
 * (declared, inverted symbolically, implied by a margin loss, or the canonical link ψ' = w, RW10 §6.1).
 * The Savage partials, the weight integral, the weight by stationarity and the posterior-recovery map are
 * the semantic layer's derivations (semantics/derived/), shared with hovers and quick fixes.
 */
import { CODE_STYLE, formatNumber, formatPowerLaw, verdictText, type VerdictName } from "../display.js";
import type { DefinitionForm } from "../loss-model.js";
import type { LossAnalysis } from "../analysis/analyse.js";
import { nearlyEqual } from "../analysis/numeric/tolerance.js";
import type { Expr } from "../syntax/ast.js";
import { compileExpr } from "../semantics/compile.js";
import type { LossReport } from "../pipeline/stages.js";
import { recoveryMap, savagePartials, weightFromPartials } from "../semantics/derived/savage.js";
import { integrateWeight } from "../semantics/derived/weight-integral.js";
import {
  call, dependsOn, differentiate, name, negate as neg, NotDifferentiable, num, op as bin, printExpr as printNotation, simplify, substitute,
} from "../semantics/symbolic.js";
import type { CompiledLoss } from "../semantics/family.js";
import type { DefInfo } from "../semantics/model.js";
import { logit, sigmoid } from "../semantics/builtins.js";
import { rewriteLogCdf, rewriteStable, sameExpr } from "./rewrite.js";

/**
 * Clamping bound for probabilities where a singularity remains after the stable rewrites. 1e-7 is the
 * usual choice for float32 (common practice): float32's machine epsilon is 1.19e-7, so 1 − 1e-7 rounds
 * to the largest float32 below 1 and log(1 − q) stays finite.
 */
export const CLAMP_EPS = 1e-7;

/** Relative tolerance for accepting a recognised link (a closed form must reproduce the numeric one to rounding). */
export const LINK_MATCH_TOL = 1e-9;

/** Sample scores and probabilities for recognising and checking links. */
const LINK_CHECK_SCORES = [-4, -2.5, -1, -0.3, 0.2, 0.7, 1.5, 3];
const LINK_CHECK_PROBS = [0.03, 0.11, 0.26, 0.4, 0.5, 0.63, 0.77, 0.91, 0.98];

export type InputScale = "prob" | "score";

/** What the engine said about the loss, as printed in the header. */
export interface EngineFacts {
  verdict: VerdictName;
  lambda: number | null;
  exponents: { viaModulus: number | null; direct: number | null };
  modulus: { coefficient: number; power: number } | null;
  /** True when the loss is treated as improper (engine verdict, or the file's own claim while the engine cannot decide). */
  improper: boolean;
  /** Why it is treated as improper, for the WARNING line. */
  improperReason: string | null;
  /** True when the file says `expect improper` (consent to generate an improper loss, as `check` reads it). */
  consented: boolean;
  /** The `expect` claims the engine refutes, as its messages ("Claim "expect convex" fails: …"). */
  failedClaims: string[];
  /** Where the figures come from: the defaults (nothing overridden), the values baked in, or the defaults because re-analysis failed (with why). */
  figuresAt: "defaults" | "baked" | { failed: string };
}

export interface LoweredLoss {
  /** The loss name as written in the file. */
  name: string;
  form: DefinitionForm;
  input: InputScale;
  /** The expression variable: `q` for probabilities, `v` for scores. */
  variable: "q" | "v";
  /** Per-sample loss for y = 1 and y = 0 (stable forms), and their derivatives in the variable. */
  pos: Expr;
  neg: Expr;
  dpos: Expr;
  dneg: Expr;
  /** Probability clamping where a singularity remains: bounds, or null for a side that needs none. */
  clamp: { lo: number | null; hi: number | null } | null;
  /**
   * The posterior-recovery map η(q) for improper losses (in q), with its own clamping; `userDef` names the
   * file's own `def` of that map (inserted by the quick fix) when one agrees with the derived map.
   */
  recover: { expr: Expr; clamp: { lo: number | null; hi: number | null } | null; userDef: string | null } | null;
  /** Why no recovery map was generated for an improper loss (null when it was, or the loss is proper). */
  recoverNote: string | null;
  params: { name: string; value: number }[];
  /** True when some parameter differs from its default (the engine figures are for the defaults). */
  overridden: boolean;
  threshold: number;
  /** How scores relate to probabilities, for the header (null for probability input of a probability-scale loss). */
  linkNote: string | null;
  engine: EngineFacts;
  /** The partial losses as formulas in the notation, for the docstring. */
  formulaPos: string;
  formulaNeg: string;
}

export interface LowerOptions {
  input?: InputScale;
  /** Use the canonical link (ψ' = w) for score input even when the file declares another link. */
  link?: "declared" | "canonical";
  allowImproper?: boolean;
  overrides?: Record<string, number>;
  /**
   * The engine's analysis at the overridden values (the pipeline's `analyseAt`), or `{ failed }` when it
   * could not run; absent when nothing is overridden (the report's own analysis is at the defaults).
   */
  pinned?: { analysis: LossAnalysis | null; reason: string | null };
  /** The file's helper definitions, to find the user's own recovery map (`def <loss>_recovery(q) = …`). */
  defs?: ReadonlyMap<string, DefInfo>;
}

export type LowerResult = { ok: true; loss: LoweredLoss } | { ok: false; message: string };

class Refusal extends Error {}

/** A compiled single-variable function of a baked expression (no parameters remain). */
function evaluator(e: Expr, variable: string): (x: number) => number {
  const f = compileExpr(e, { variable, paramSlots: new Map(), defs: new Map() });
  const p = new Float64Array(0);
  return (x) => {
    try {
      return f(x, p);
    } catch {
      return NaN;
    }
  };
}

/** Differentiates, turning "no rule" into a refusal the user can read. */
function derivative(e: Expr, x: string, what: string): Expr {
  try {
    return differentiate(e, x);
  } catch (err) {
    if (err instanceof NotDifferentiable) throw new Refusal(`cannot differentiate ${what}: ${err.message}`);
    throw err;
  }
}

function engineFacts(report: LossReport, pinned: LowerOptions["pinned"]): EngineFacts {
  const a: LossAnalysis | null = pinned ? pinned.analysis : report.analysis;
  const claimsImproper = report.info.expects.some((x) => x.claim?.kind === "improper");
  const verdict = a?.verdict ?? "unknown";
  let improper = verdict === "improper";
  let improperReason: string | null = improper ? "the engine's verdict is improper" : null;
  if (!improper && verdict === "unknown" && claimsImproper) {
    // Until the engine decides, the file's own `expect improper` is the best evidence available.
    improper = true;
    improperReason = "the file claims `expect improper` and the engine's verdict is not available";
  }
  return {
    verdict,
    lambda: a?.lambda ?? null,
    exponents: { viaModulus: a?.exponents.viaModulus ?? null, direct: a?.exponents.direct ?? null },
    modulus: a?.modulus ?? null,
    improper,
    improperReason,
    consented: claimsImproper,
    failedClaims: (a?.findings ?? []).filter((f) => f.code === "expect-failed").map((f) => f.message),
    figuresAt: !pinned ? "defaults" : pinned.analysis ? "baked" : { failed: pinned.reason ?? "the engine could not analyse it" },
  };
}

/** Symbolic inverse of a link ψ(q): solves ψ(q) = t for q by peeling invertible layers; null when some layer is not. */
function invertLink(link: Expr, t: Expr, x: string): Expr | null {
  const dep = (e: Expr) => dependsOn(e, x);
  let e = link;
  while (e.kind === "paren") e = e.inner;
  switch (e.kind) {
    case "name":
      return e.name === x ? t : null;
    case "unary":
      if (e.op === "-") return invertLink(e.operand, neg(t), x);
      if (e.op === "+") return invertLink(e.operand, t, x);
      return null;
    case "binary": {
      const { left: l, right: r } = e;
      const ld = dep(l);
      const rd = dep(r);
      if (ld && rd) {
        // ln-free odds form u/(1 − u) = t ⇒ u = t/(1 + t).
        if (e.op === "/" && r.kind === "binary" && r.op === "-" && r.left.kind === "number" && r.left.value === 1 && sameExpr(r.right, l)) {
          return invertLink(l, bin("/", t, bin("+", num(1), t)), x);
        }
        return null;
      }
      if (!ld && !rd) return null;
      switch (e.op) {
        case "+": return ld ? invertLink(l, bin("-", t, r), x) : invertLink(r, bin("-", t, l), x);
        case "-": return ld ? invertLink(l, bin("+", t, r), x) : invertLink(r, bin("-", l, t), x);
        case "*": return ld ? invertLink(l, bin("/", t, r), x) : invertLink(r, bin("/", t, l), x);
        case "/": return ld ? invertLink(l, bin("*", t, r), x) : invertLink(r, bin("/", l, t), x);
        case "^": return ld ? invertLink(l, bin("^", t, bin("/", num(1), r)), x) : null;
        default: return null;
      }
    }
    case "call": {
      const a = e.args[0];
      if (!a || e.args.length !== 1) return null;
      const inv: Record<string, string> = { logit: "sigmoid", sigmoid: "logit", ln: "exp", log: "exp", exp: "ln", probit: "normcdf", normcdf: "probit" };
      const g = inv[e.callee];
      if (g) return invertLink(a, call(g, t), x);
      if (e.callee === "sqrt") return invertLink(a, bin("^", t, num(2)), x);
      return null;
    }
    default:
      return null;
  }
}

/** True when ψ(ψ⁻¹(v)) = v at the check scores (and ψ⁻¹ lands in (0,1)). */
function checkInverse(link: (q: number) => number, inverse: (v: number) => number): boolean {
  return LINK_CHECK_SCORES.every((v) => {
    const q = inverse(v);
    return q > 0 && q < 1 && nearlyEqual(link(q), v, LINK_MATCH_TOL, LINK_MATCH_TOL);
  });
}

/**
 * The canonical link ψ with ψ' = w (RW10 §6.1), normalised by ψ(½) = 0, for the weight shapes whose link
 * has a closed-form inverse: w = k (ψ = k(q − ½)), w = k/(q(1−q)) (ψ = k·logit q) and
 * w = k·(q(1−q))^(−3/2) (ψ = 2k(2q−1)/√(q(1−q)), the canonical exponential link of Agarwal 2014, Table 1).
 */
function canonicalLink(w: (q: number) => number): { link: Expr; inverse: Expr; note: string } | null {
  const shapes: { f: (q: number) => number; make: (k: number) => { link: Expr; inverse: Expr; note: string } }[] = [
    {
      f: () => 1,
      make: (k) => ({ link: bin("*", num(k), bin("-", name("q"), num(0.5))), inverse: bin("+", num(0.5), bin("/", name("v"), num(k))), note: `canonical link ψ(q) = ${k}·(q − 1/2)` }),
    },
    {
      f: (q) => 1 / (q * (1 - q)),
      make: (k) => ({ link: bin("*", num(k), call("logit", name("q"))), inverse: call("sigmoid", bin("/", name("v"), num(k))), note: `canonical link ψ(q) = ${k}·logit(q)` }),
    },
    {
      f: (q) => Math.pow(q * (1 - q), -1.5),
      make: (k) => {
        const u = bin("/", name("v"), num(2 * k));
        return {
          link: bin("/", bin("*", num(2 * k), bin("-", bin("*", num(2), name("q")), num(1))), call("sqrt", bin("*", name("q"), bin("-", num(1), name("q"))))),
          inverse: bin("*", num(0.5), bin("+", num(1), bin("/", u, call("sqrt", bin("+", bin("^", u, num(2)), num(4)))))),
          note: `canonical link ψ(q) = ${2 * k}·(2q − 1)/√(q(1 − q))`,
        };
      },
    },
  ];
  for (const s of shapes) {
    const k = w(0.5) / s.f(0.5);
    if (!(Number.isFinite(k) && k > 0)) continue;
    if (LINK_CHECK_PROBS.every((q) => nearlyEqual(w(q), k * s.f(q), LINK_MATCH_TOL, 0))) return s.make(Number(k.toPrecision(15)));
  }
  return null;
}

/** A finite-or-not probe of an expression at the ends of [0,1]: which sides need clamping. */
function singularSides(exprs: Expr[], variable: string): { lo: number | null; hi: number | null } | null {
  const fs = exprs.map((e) => evaluator(e, variable));
  const lo = fs.some((f) => !Number.isFinite(f(0)));
  const hi = fs.some((f) => !Number.isFinite(f(1)));
  if (!lo && !hi) return null;
  return { lo: lo ? CLAMP_EPS : null, hi: hi ? 1 - CLAMP_EPS : null };
}

/** Lowers one analysed loss. Never throws: every problem becomes `{ ok: false, message }`. */
export function lowerLoss(report: LossReport, options: LowerOptions = {}): LowerResult {
  try {
    return { ok: true, loss: lower(report, options) };
  } catch (err) {
    if (err instanceof Refusal) return { ok: false, message: err.message };
    return { ok: false, message: `internal error while lowering \`${report.info.name}\`: ${err instanceof Error ? err.message : String(err)}` };
  }
}

function lower(report: LossReport, options: LowerOptions): LoweredLoss {
  const info = report.info;
  const compiled = report.compiled;
  if (!compiled || info.hasErrors || info.form === null) {
    throw new Refusal(`the loss \`${info.name}\` has errors; fix them first (run \`propriety check\`)`);
  }
  const form = info.form;
  const input: InputScale = options.input ?? "prob";
  // Parameters: defaults, then overrides (checked against the declared ranges).
  const overrides = options.overrides ?? {};
  const params: { name: string; value: number }[] = [];
  for (const p of compiled.family.params) {
    let value = p.default;
    if (Object.prototype.hasOwnProperty.call(overrides, p.name)) {
      value = overrides[p.name]!;
      if (!Number.isFinite(value)) throw new Refusal(`the value of \`${p.name}\` must be a finite number`);
      if ((p.lo !== undefined && value < p.lo) || (p.hi !== undefined && value > p.hi)) {
        throw new Refusal(`\`${p.name}\` = ${value} lies outside its declared range [${p.lo ?? "-inf"}, ${p.hi ?? "inf"}]`);
      }
    }
    params.push({ name: p.name, value });
  }
  const overridden = params.some((p, i) => p.value !== compiled.family.params[i]!.default);
  const bindings = new Map(params.map((p) => [p.name, num(p.value)]));
  const bake = (e: Expr): Expr => simplify(substitute(e, bindings));
  const forms = compiled.forms;

  // The engine's facts at the values baked in; an improper loss needs consent: --allow-improper, or the
  // file's own `expect improper` (as `check` reads it).
  const engine = engineFacts(report, overridden ? options.pinned : undefined);
  if (engine.improper && !options.allowImproper && !engine.consented) {
    const at = overridden ? ` at ${params.map((p) => `${p.name} = ${p.value}`).join(", ")}` : "";
    throw new Refusal(`the loss \`${info.name}\` is improper${at} (${engine.improperReason}); its outputs are not calibrated probabilities. Generate it anyway with --allow-improper or by writing \`expect improper\` in the loss (a WARNING line and, where possible, a posterior-recovery function are added)`);
  }

  const thresholdForm = forms.threshold;
  const threshold = thresholdForm ? evaluator(bake(thresholdForm.expr), "")(NaN) : 0.5;

  // The partial losses in their natural variable.
  let natural: "q" | "v";
  let l1: Expr;
  let l0: Expr;
  switch (form) {
    case "partials":
      natural = "q";
      l1 = bake(forms.l1!.expr);
      l0 = bake(forms.l0!.expr);
      break;
    case "score-partials":
      natural = "v";
      l1 = bake(forms.l1!.expr);
      l0 = bake(forms.l0!.expr);
      break;
    case "bayes": {
      natural = "q";
      const H = bake(forms.bayes!.expr);
      // Savage form: l1 = H + (1 − q)H', l0 = H − qH'.
      ({ l1, l0 } = savagePartials(H, derivative(H, "q", "the Bayes risk"), "q"));
      break;
    }
    case "weight": {
      natural = "q";
      const w = bake(forms.weight!.expr);
      const r = integrateWeight(w, "q");
      if (!r.ok) {
        throw new Refusal(`the weight of \`${info.name}\` has no closed-form integral the generator can produce: ${r.reason}. Write the loss by its Bayes risk (\`bayes(q) = …\`) or its partial losses (\`l1(q)\`, \`l0(q)\`) instead`);
      }
      l1 = r.l1;
      l0 = r.l0;
      break;
    }
    case "margin": {
      natural = "v";
      const phi = bake(forms.margin!.expr);
      l1 = phi;
      l0 = simplify(substitute(phi, new Map([["v", neg(name("v"))]])));
      break;
    }
  }

  // Relate the input scale to the natural variable.
  let variable: "q" | "v" = input === "prob" ? "q" : "v";
  let linkNote: string | null = null;
  let pos = l1;
  let negE = l0;
  const declaredLink = forms.link ? bake(forms.link.expr) : null;
  const declaredInverse = forms.inverse ? bake(forms.inverse.expr) : null;
  const wantCanonical = options.link === "canonical" || info.clauses.get("link")?.canonical === true;

  if (natural === "q" && input === "score") {
    let inverse: Expr | null = null;
    if (wantCanonical) {
      const c = canonicalLink(weightOf(form, l1, forms, bake));
      if (!c) throw new Refusal(`the canonical link of \`${info.name}\` (ψ' = w) has no closed-form inverse the generator recognises; use --input prob, or declare \`link(q)\` and \`inverse(v)\``);
      inverse = c.inverse;
      linkNote = `scores v map to probabilities through the inverse of the ${c.note}`;
    } else if (declaredLink) {
      inverse = declaredInverse ?? invertLink(declaredLink, name("v"), "q");
      if (!inverse) throw new Refusal(`the link of \`${info.name}\` has no inverse the generator can write in closed form; declare \`inverse(v) = …\``);
      const ok = checkInverse(evaluator(declaredLink, "q"), evaluator(inverse, "v"));
      if (!ok) throw new Refusal(`the inverse link of \`${info.name}\` does not invert its link at the check scores; fix \`inverse(v)\``);
      linkNote = `scores v map to probabilities by q = ${printShort(inverse)} (the declared link is ${printShort(declaredLink)})`;
    } else {
      throw new Refusal(`score input needs a link: \`${info.name}\` declares none. Add \`link(q) = …\` or \`link = canonical\`, pass --link canonical, or use --input prob`);
    }
    const map = new Map([["q", inverse]]);
    pos = substitute(l1, map);
    negE = substitute(l0, map);
  } else if (natural === "v" && input === "prob") {
    let link: Expr | null = declaredLink;
    if (link) {
      linkNote = `probabilities q map to scores by the declared link v = ${printShort(link)}`;
    } else if (form === "margin") {
      link = marginLink(forms.margin!.d1 ? bake(forms.margin!.d1) : null);
      if (!link) {
        throw new Refusal(`the margin loss \`${info.name}\` has no implied link of the form v = logit(q)/k that the generator recognises (for the hinge loss there is no invertible link at all); use --input score, or declare \`link(q) = …\``);
      }
      linkNote = `probabilities q map to scores by the implied link v = ${printShort(link)} (Reid & Williamson 2010, Cor. 14)`;
    } else {
      throw new Refusal(`probability input needs a link for \`${info.name}\`; use --input score`);
    }
    const map = new Map([["v", link]]);
    pos = substitute(l1, map);
    negE = substitute(l0, map);
  } else if (input === "score") {
    linkNote = "pred holds scores v (the loss is written in the score)";
  }
  variable = input === "prob" ? "q" : "v";

  pos = rewriteStable(pos, variable);
  negE = rewriteStable(negE, variable);
  const dpos = rewriteStable(derivative(pos, variable, "the loss for y = 1"), variable);
  const dneg = rewriteStable(derivative(negE, variable, "the loss for y = 0"), variable);
  const clamp = input === "prob" ? singularSides([pos, negE, dpos, dneg], "q") : null;
  // log Φ last: the clamping probe and the derivatives above read the notation's own functions.
  pos = rewriteLogCdf(pos);
  negE = rewriteLogCdf(negE);
  const [dposOut, dnegOut] = [rewriteLogCdf(dpos), rewriteLogCdf(dneg)];

  // Posterior recovery (RW10 Cor. 12): η = l0'(q)/(l0'(q) − l1'(q)), for improper losses on probabilities.
  let recover: LoweredLoss["recover"] = null;
  let recoverNote: string | null = null;
  if (engine.improper) {
    // `recovery` undefined: the engine does not report it (yet), so partial losses get the map on the
    // verdict alone; null: the engine found no map; otherwise it must report a monotone minimiser.
    const reported = report.analysis?.recovery;
    const eligible = reported === undefined ? form === "partials" : reported !== null && reported.monotone;
    if (!eligible) {
      recoverNote = reported === null
        ? "the engine finds no posterior-recovery map (the risk minimiser q*(η) does not determine η)"
        : reported !== undefined && !reported.monotone
          ? "the engine reports a minimiser q*(η) that is not monotone, so no recovery map exists"
          : "a recovery map is generated only for partial losses on probabilities";
    } else if (natural !== "q") {
      recoverNote = "a recovery map is generated only for partial losses on probabilities";
    } else {
      const d1 = rewriteStable(derivative(l1, "q", "l1"), "q");
      const d0 = rewriteStable(derivative(l0, "q", "l0"), "q");
      const derived = rewriteStable(recoveryMap(d1, d0), "q");
      const own = userRecovery(info.name, derived, options.defs, bake);
      const eta = own ? rewriteStable(own.body, "q") : derived;
      recover = { expr: eta, clamp: singularSides([eta], "q"), userDef: own?.name ?? null };
    }
  }

  return {
    name: info.name, form, input, variable, pos, neg: negE, dpos: dposOut, dneg: dnegOut, clamp, recover, recoverNote,
    params, overridden, threshold, linkNote, engine,
    formulaPos: printShort(l1), formulaNeg: printShort(l0),
  };
}

/** Probabilities at which the file's own recovery map must agree with the derived one. */
const RECOVERY_CHECK_PROBS = [0.05, 0.2, 0.35, 0.5, 0.65, 0.8, 0.95];

/**
 * The file's own posterior-recovery map: a `def <loss>_recovery…(q, …)` as the quick fix inserts it
 * (its further parameters are the loss's own, so baking the parameter values binds them), used when it
 * agrees with the derived map at the check points to LINK_MATCH_TOL; null otherwise.
 */
function userRecovery(loss: string, derived: Expr, defs: ReadonlyMap<string, DefInfo> | undefined, bake: (e: Expr) => Expr): { name: string; body: Expr } | null {
  if (!defs) return null;
  const want = evaluator(derived, "q");
  for (const [defName, def] of defs) {
    if (!defName.startsWith(`${loss}_recovery`) || def.hasErrors || !def.decl.body || def.decl.params[0]?.name !== "q") continue;
    const body = bake(def.decl.body);
    const got = evaluator(body, "q");
    if (RECOVERY_CHECK_PROBS.every((q) => Number.isFinite(want(q)) && nearlyEqual(got(q), want(q), LINK_MATCH_TOL, LINK_MATCH_TOL))) return { name: defName, body };
  }
  return null;
}

/** The weight w(q) of a loss on probabilities, numerically: −l1'(q)/(1−q) (RW10 Thm 1, Shuford et al. 1966), or the weight clause itself. */
function weightOf(form: DefinitionForm, l1: Expr, forms: CompiledLoss["forms"], bake: (e: Expr) => Expr): (q: number) => number {
  if (form === "weight" && forms.weight) return evaluator(bake(forms.weight.expr), "q");
  return evaluator(weightFromPartials(derivative(l1, "q", "l1"), null, "q").fromL1!, "q");
}

/**
 * The implied link of a margin loss, ψ⁻¹(v) = φ'(−v)/(φ'(−v) + φ'(v)) (RW10 Cor. 14), recognised when it is
 * sigmoid(k·v) for a constant k > 0: then ψ(q) = logit(q)/k (k = 1 logistic, k = 2 exponential).
 */
function marginLink(dphi: Expr | null): Expr | null {
  if (!dphi) return null;
  const d = evaluator(dphi, "v");
  const inv = (v: number) => d(-v) / (d(-v) + d(v));
  const k = logit(inv(1));
  if (!(Number.isFinite(k) && k > 0)) return null;
  const kk = Number(k.toPrecision(15));
  if (!LINK_CHECK_SCORES.every((v) => nearlyEqual(inv(v), sigmoid(kk * v), LINK_MATCH_TOL, 1e-15))) return null;
  return kk === 1 ? call("logit", name("q")) : bin("/", call("logit", name("q")), num(kk));
}

/** A compact notation rendering for headers and docstrings. */
function printShort(e: Expr): string {
  return printNotation(simplify(e));
}


/** The describing lines of one generated loss (no comment markers; the emitters add them). */
export function lossHeaderLines(loss: LoweredLoss, source: string, functionName: string, recoverName: string | null): string[] {
  const e = loss.engine;
  const figure = (x: number | null) => formatNumber(x, CODE_STYLE);
  const lines: string[] = [`loss \`${loss.name}\` from ${source} (form: ${FORM_TEXT[loss.form]}), generated as ${functionName}`];
  if (e.improper) {
    lines.push(
      `WARNING: improper loss (${e.improperReason}): minimising it does not return calibrated probabilities.` +
        (e.consented ? " The file says `expect improper` (consent to generate it)." : "") +
        (recoverName ? ` Map its predictions through ${recoverName}(q) to estimate the posterior${loss.recover?.userDef ? ` (the file's own \`def ${loss.recover.userDef}\`)` : ""}.` : loss.recoverNote ? ` No recovery map: ${loss.recoverNote}.` : ""),
    );
  }
  for (const c of e.failedClaims) lines.push(`FAILED CLAIM: ${c}`);
  const at = e.figuresAt === "defaults" ? "" : e.figuresAt === "baked" ? " (re-analysed at the parameter values baked in)" : ` (re-analysis at the values baked in failed: ${e.figuresAt.failed}; no engine figures)`;
  lines.push(`verdict: ${verdictText(e.verdict)}${at}`);
  lines.push(`lambda (inf of the weight function): ${figure(e.lambda)}`);
  const x = e.exponents;
  lines.push(`surrogate-regret exponents: via modulus ${figure(x.viaModulus)}; direct ${figure(x.direct)}`);
  if (e.modulus) lines.push(`modulus of convexity: delta(eps) ~ ${formatPowerLaw(e.modulus.coefficient, e.modulus.power, CODE_STYLE)}`);
  lines.push(`parameters (baked in): ${loss.params.length === 0 ? "none" : loss.params.map((p) => `${p.name} = ${figure(p.value)}`).join(", ")}`);
  lines.push(`decision threshold: ${figure(loss.threshold)}`);
  lines.push(loss.input === "prob" ? "input: pred holds probabilities q in [0, 1]" : "input: pred holds scores v (real numbers)");
  if (loss.linkNote) lines.push(`link: ${loss.linkNote}`);
  lines.push(`partial losses: y = 1: ${loss.formulaPos}; y = 0: ${loss.formulaNeg}`);
  lines.push(`clamping: ${loss.input === "score" ? "none (scores are used as given)" : clampText(loss.clamp, "q")}`);
  return lines;
}

/** One line on the clamping of a probability argument. */
export function clampText(clamp: LoweredLoss["clamp"], variable: string): string {
  if (!clamp) return "none (finite on the whole input range)";
  const sides = clamp.lo !== null && clamp.hi !== null ? `[EPS, 1 - EPS]` : clamp.lo !== null ? `[EPS, 1]` : `[0, 1 - EPS]`;
  const where = [clamp.lo !== null ? `${variable} = 0` : null, clamp.hi !== null ? `${variable} = 1` : null].filter((s) => s !== null).join(" and ");
  return `${variable} clamped to ${sides}, EPS = ${CLAMP_EPS} (float32 and float64 alike: 1 - EPS < 1 in both), because a singularity remains at ${where}; the gradient is 0 outside the bounds`;
}

const FORM_TEXT: Record<DefinitionForm, string> = {
  partials: "partial losses",
  "score-partials": "partial losses in the score",
  bayes: "Bayes risk, Savage form",
  weight: "weight function, integral form",
  margin: "margin function",
};
