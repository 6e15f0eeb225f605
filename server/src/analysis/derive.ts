/**
 * Derivation of the common model (`LossFunctions`: partial losses, Bayes risk, weight and link on
 * q ∈ [0,1]) from every definition form of a loss. Nothing here decides properness; it only builds the
 * functions and reports problems met while building them (divergent integrals, links that cannot be
 * inverted, declared inverses that disagree with the link).
 */
import type { Finding, LossFunctions, LossSpec, Note, RealFn } from "../loss-model.js";
import { fmt } from "../display.js";
import { globalMin } from "./numeric/minimise.js";
import { probabilityGrid } from "./numeric/sampling.js";
import { diff2InUnit, diffInUnit, diffOnLine } from "./numeric/differences.js";
import { invertMonotone } from "./numeric/roots.js";
import { memoise } from "./numeric/memo.js";
import { UnitIntegral } from "./numeric/unit-integral.js";
import {
  impliedInverseLink,
  marginBayes,
  marginDerivative,
  marginLinkFromInverse,
  marginRisk,
  MARGIN_MIN_GRID,
  MARGIN_SCORE_BOUND,
  safeCall,
  scanMarginLink,
} from "./margin.js";

/** The result of deriving the common model: the functions (null when they cannot be built) and what went wrong. */
export interface DeriveResult {
  fns: LossFunctions | null;
  findings: Finding[];
}

/**
 * A numerically minimised Bayes risk is accepted over L(η,η) only when it is lower by more than this
 * (relative to |L(η,η)| + |L(η,½)|, both on the loss's own scale, so a multiple of a loss gets the same
 * decision): below it the difference is rounding in the minimiser, and keeping L(η,η) gives exact values
 * for proper losses.
 */
export const BAYES_ACCEPT_TOL = 1e-9;
/** Grid of the numeric infimum over q (plus golden refinement of the best cells). */
export const BAYES_MIN_GRID = 200;
/** Largest |ψ⁻¹(ψ(q)) − q| tolerated between a declared inverse and the link (bisection and rounding of both closures). */
export const INVERSE_TOL = 1e-7;

/** Builds an "internal-error" finding from a caught exception. */
export function internalError(where: string, e: unknown): Finding {
  const msg = e instanceof Error ? e.message : String(e);
  return { code: "internal-error", clause: "loss", message: `Internal error in ${where}: ${msg}`, data: { where } };
}

/** The conditional risk η·l1(q) + (1−η)·l0(q), with zero-coefficient terms dropped so 0·∞ never appears. */
export function riskOf(l1: RealFn, l0: RealFn): (eta: number, q: number) => number {
  return (eta, q) => (eta === 0 ? 0 : eta * l1(q)) + (eta === 1 ? 0 : (1 - eta) * l0(q));
}

/**
 * H(η) = inf_q L(η,q): L(η,η) unless a grid scan with golden refinement finds a value lower by more than
 * BAYES_ACCEPT_TOL, so proper losses get the closed-form value and improper ones the true infimum.
 */
export function numericBayes(risk: (eta: number, q: number) => number): RealFn {
  return memoise((eta: number) => {
    if (!(eta >= 0 && eta <= 1)) return NaN;
    const diag = risk(eta, eta);
    const m = globalMin((q) => risk(eta, q), 0, 1, BAYES_MIN_GRID, 3);
    if (!Number.isFinite(diag)) return m.fx;
    const half = risk(eta, 0.5);
    const scale = Math.abs(diag) + (Number.isFinite(half) ? Math.abs(half) : 0);
    return m.fx < diag - BAYES_ACCEPT_TOL * scale ? m.fx : diag;
  });
}

/** The stationarity ratio w(q) = −l1'(q)/(1−q) below ½ and l0'(q)/q above (each well conditioned on its side). */
export function stationarityWeight(dl1: RealFn, dl0: RealFn): RealFn {
  return (q: number) => (q <= 0.5 ? -dl1(q) / (1 - q) : dl0(q) / q);
}

/** Wraps a user closure so exceptions become NaN. */
function guard(f: RealFn | undefined): RealFn | undefined {
  return f ? (x: number) => safeCall(f, x) : undefined;
}

interface LinkParts {
  link: RealFn | null;
  dlink: RealFn | null;
  inverseLink: RealFn | null;
}

/** Interior sample points for derivation-time checks (links, inverses, weights). */
function checkGrid(): number[] {
  return probabilityGrid(100, 8);
}

/**
 * Checks a link on probabilities: strictly monotone on the grid ("link-not-monotone" with the point)
 * and, when an inverse is declared, ψ⁻¹(ψ(q)) = q ("inverse-mismatch" with the point).
 */
export function checkLink(link: RealFn, inverse: RealFn | undefined, findings: Finding[]): boolean {
  const qs = checkGrid();
  const vs = qs.map((q) => link(q));
  const bad = vs.findIndex((v) => !Number.isFinite(v));
  if (bad >= 0) {
    findings.push({
      code: "non-finite-value",
      clause: "link",
      message: `The link is ${fmt(vs[bad]!)} at q = ${fmt(qs[bad]!)}, inside (0, 1).`,
      data: { q: qs[bad], value: vs[bad] },
    });
    return false;
  }
  const sign = Math.sign(vs[vs.length - 1]! - vs[0]!);
  for (let i = 0; i + 1 < vs.length; i++) {
    const d = vs[i + 1]! - vs[i]!;
    if (!(Math.sign(d) === sign && sign !== 0)) {
      findings.push({
        code: "link-not-monotone",
        clause: "link",
        message: `The link is not strictly monotone: ψ(${fmt(qs[i]!)}) = ${fmt(vs[i]!)} and ψ(${fmt(qs[i + 1]!)}) = ${fmt(vs[i + 1]!)}.`,
        data: { q: qs[i], q2: qs[i + 1], value: vs[i], value2: vs[i + 1] },
      });
      return false;
    }
  }
  if (inverse) {
    let worst = 0;
    let at = -1;
    for (let i = 0; i < qs.length; i++) {
      const back = safeCall(inverse, vs[i]!);
      const err = Number.isFinite(back) ? Math.abs(back - qs[i]!) : Infinity;
      if (err > worst) {
        worst = err;
        at = i;
      }
    }
    if (worst > INVERSE_TOL) {
      const q = qs[at]!;
      findings.push({
        code: "inverse-mismatch",
        clause: "inverse",
        message: `The declared inverse does not invert the link: at q = ${fmt(q)}, ψ(q) = ${fmt(vs[at]!)} but inverse(ψ(q)) = ${fmt(safeCall(inverse, vs[at]!))}.`,
        data: { q, v: vs[at], inverse: safeCall(inverse, vs[at]!), error: worst },
      });
    }
  }
  return true;
}

/** A numeric inverse of a monotone link ψ on [0,1] (bisection in q). */
function numericInverse(link: RealFn): RealFn {
  return memoise((v: number) => invertMonotone(link, v, 0, 1));
}

/** Link parts for losses on probabilities: declared link (with derivative and inverse) or the canonical one (ψ' = w). */
/** `canonicalFromBayes` is H' of the loss (declared, or l1 − l0 for partials), from which the canonical link follows exactly. */
function probabilityLink(spec: LossSpec, weight: RealFn | null, canonicalFromBayes: RealFn | null, findings: Finding[], notes: Note[]): LinkParts {
  if (spec.link) {
    const link = guard(spec.link)!;
    const inverse = guard(spec.inverse);
    const ok = checkLink(link, inverse, findings);
    const dlink = guard(spec.dlink) ?? ((q: number) => diffInUnit(link, q));
    const mismatch = findings.some((f) => f.code === "inverse-mismatch");
    return { link, dlink, inverseLink: ok ? (inverse && !mismatch ? inverse : numericInverse(link)) : null };
  }
  if (spec.canonicalLink) {
    if (canonicalFromBayes) {
      // The canonical link is ψ(q) = H'(½) − H'(q), since ψ' = w = −H'' (Reid & Williamson 2010, §6.1).
      const dH = canonicalFromBayes;
      const h0 = dH(0.5);
      const link = (q: number) => h0 - dH(q);
      notes.push({ kind: "link", text: "Canonical link ψ(q) = H'(½) − H'(q) (ψ' = w, normalised so ψ(½) = 0)." });
      return { link, dlink: weight, inverseLink: numericInverse(link) };
    }
    if (!weight) return { link: null, dlink: null, inverseLink: null };
    const table = new UnitIntegral(weight);
    const link = (q: number) => table.fromHalf(q);
    notes.push({ kind: "link", text: "Canonical link ψ(q) = ∫_{1/2}^q w(c) dc (ψ' = w, normalised so ψ(½) = 0), tabulated." });
    return { link, dlink: weight, inverseLink: numericInverse(link) };
  }
  return { link: null, dlink: null, inverseLink: null };
}

function assemble(
  spec: LossSpec,
  parts: {
    l1: RealFn;
    l0: RealFn;
    dl1: RealFn;
    dl0: RealFn;
    bayes?: RealFn;
    weight: RealFn | null;
    weightExact?: boolean;
    link?: LinkParts;
    margin?: RealFn | null;
    notes: Note[];
  },
): LossFunctions {
  const risk = riskOf(parts.l1, parts.l0);
  return {
    form: spec.form,
    threshold: spec.threshold,
    l1: parts.l1,
    l0: parts.l0,
    dl1: parts.dl1,
    dl0: parts.dl0,
    risk,
    bayes: parts.bayes ?? numericBayes(risk),
    weight: parts.weight,
    weightExact: parts.weightExact === true && parts.weight !== null,
    link: parts.link?.link ?? null,
    dlink: parts.link?.dlink ?? null,
    inverseLink: parts.link?.inverseLink ?? null,
    margin: parts.margin ?? null,
    notes: parts.notes,
  };
}

function derivePartials(spec: LossSpec): DeriveResult {
  const findings: Finding[] = [];
  const notes: Note[] = [];
  if (!spec.l1 || !spec.l0) {
    return { fns: null, findings: [{ code: "analysis-unknown", clause: "loss", message: "Both partial losses l1 and l0 are needed to analyse this loss." }] };
  }
  const l1 = guard(spec.l1)!;
  const l0 = guard(spec.l0)!;
  const dl1 = guard(spec.dl1) ?? ((q: number) => diffInUnit(l1, q));
  const dl0 = guard(spec.dl0) ?? ((q: number) => diffInUnit(l0, q));
  if (!spec.dl1 || !spec.dl0) notes.push({ kind: "numeric-derivative", text: "Derivatives of the partial losses are central differences (no closed form was given)." });
  const weight = stationarityWeight(dl1, dl0);
  notes.push({ kind: "derivation", text: "H(η) = inf_q L(η, q) by a grid scan with golden refinement; equals L(η, η) when no lower value is found." });
  // For a proper loss H' = l1 − l0 (Savage form: l1 = H + (1−q)H', l0 = H − qH'), so the canonical link
  // ψ = H'(½) − H' needs no quadrature; for an improper loss the canonical link has no meaning anyway.
  const link = probabilityLink(spec, weight, (q) => l1(q) - l0(q), findings, notes);
  return { fns: assemble(spec, { l1, l0, dl1, dl0, weight, weightExact: !!(spec.dl1 && spec.dl0), link, notes }), findings };
}

function deriveBayes(spec: LossSpec): DeriveResult {
  const findings: Finding[] = [];
  const notes: Note[] = [];
  if (!spec.bayes) {
    return { fns: null, findings: [{ code: "analysis-unknown", clause: "bayes", message: "The Bayes risk clause is missing." }] };
  }
  const H = guard(spec.bayes)!;
  const dH = guard(spec.dbayes) ?? ((q: number) => diffInUnit(H, q));
  const d2H = guard(spec.d2bayes) ?? (spec.dbayes ? (q: number) => diffInUnit(dH, q) : (q: number) => diff2InUnit(H, q));
  if (!spec.dbayes) notes.push({ kind: "numeric-derivative", text: "H' is a central difference (no closed form was given)." });
  // Savage's construction: l1 = H + (1−q)H', l0 = H − qH' (Bao 2023, Thm 1; Reid & Williamson 2010, Thm 4).
  const l1 = (q: number) => (q === 1 ? H(1) : H(q) + (1 - q) * dH(q));
  const l0 = (q: number) => (q === 0 ? H(0) : H(q) - q * dH(q));
  const dl1 = (q: number) => (1 - q) * d2H(q);
  const dl0 = (q: number) => -q * d2H(q);
  const weight = (q: number) => -d2H(q);
  const link = probabilityLink(spec, weight, dH, findings, notes);
  notes.push({ kind: "derivation", text: "Partial losses from the Savage form l1 = H + (1−q)H', l0 = H − qH'; H(η) = inf_q L(η, q), which is the declared H when H is concave." });
  return { fns: assemble(spec, { l1, l0, dl1, dl0, weight, weightExact: !!spec.d2bayes, link, notes }), findings };
}

/** Interior points where the weight is sampled for sign and finiteness. */
function weightSamples(): number[] {
  return probabilityGrid(200, 8);
}

function deriveWeight(spec: LossSpec): DeriveResult {
  const findings: Finding[] = [];
  const notes: Note[] = [];
  if (!spec.weight) {
    return { fns: null, findings: [{ code: "analysis-unknown", clause: "weight", message: "The weight clause is missing." }] };
  }
  const w = guard(spec.weight)!;
  for (const q of weightSamples()) {
    const y = w(q);
    if (!Number.isFinite(y)) {
      findings.push({
        code: "non-finite-value",
        clause: "weight",
        message: `The weight function is ${fmt(y)} at q = ${fmt(q)}, inside (0, 1).`,
        data: { q, value: y },
      });
      return { fns: null, findings };
    }
  }
  const g1 = (c: number) => (1 - c) * w(c);
  const g0 = (c: number) => c * w(c);
  const t1 = new UnitIntegral(g1);
  const t0 = new UnitIntegral(g0);
  const diverge = (where: string, at: number, integral: string) =>
    findings.push({
      code: "weight-not-integrable",
      clause: "weight",
      message: `The weight function is not integrable for the partial losses: ${integral} diverges ${where}.`,
      data: { q: at, integral },
    });
  if (!t1.tailStatus.finite) diverge("as q → 1", 1, "∫_q^1 (1−c)·w(c) dc (l1)");
  if (!t0.headStatus.finite) diverge("as q → 0", 0, "∫_0^q c·w(c) dc (l0)");
  const interior = t1.interiorDivergence ?? t0.interiorDivergence;
  if (interior !== null) diverge(`near q = ${fmt(interior)}`, interior, "the integral of w");
  if (findings.length > 0) return { fns: null, findings };
  // The integral (Schervish) representation, RW10 Thm 6 eq. (5): l1 = ∫_q^1 (1−c)w, l0 = ∫_0^q c·w.
  const l1 = memoise((q: number) => t1.tail(q));
  const l0 = memoise((q: number) => t0.head(q));
  const dl1 = (q: number) => -(1 - q) * w(q);
  const dl0 = (q: number) => q * w(q);
  const negative = weightSamples().some((q) => w(q) < 0);
  const risk = riskOf(l1, l0);
  // With w ≥ 0 the loss is proper by construction (RW10 Thm 6), so H(η) = L(η, η); otherwise the infimum is searched.
  const bayes = negative ? numericBayes(risk) : (eta: number) => risk(eta, eta);
  notes.push({ kind: "derivation", text: "Partial losses by the integral representation l1(q) = ∫_q^1 (1−c)w(c)dc, l0(q) = ∫_0^q c·w(c)dc, tabulated with local Gauss–Kronrod completion." });
  // H' = l1 − l0 here too (the partials are tabulated), which gives the canonical link without another table.
  const link = probabilityLink(spec, w, (q) => l1(q) - l0(q), findings, notes);
  return { fns: assemble(spec, { l1, l0, dl1, dl0, bayes, weight: w, weightExact: true, link, notes }), findings };
}

function deriveMargin(spec: LossSpec): DeriveResult {
  const findings: Finding[] = [];
  const notes: Note[] = [];
  if (!spec.margin) {
    return { fns: null, findings: [{ code: "analysis-unknown", clause: "margin", message: "The margin clause is missing." }] };
  }
  const phi = guard(spec.margin)!;
  const dphi = marginDerivative(phi, guard(spec.dmargin));
  const d2phi = guard(spec.d2margin) ?? ((v: number) => diffOnLine(dphi, v));
  const inv = impliedInverseLink(dphi);
  const scan = scanMarginLink(inv);
  const Hmargin = memoise(marginBayes(phi));
  notes.push({ kind: "derivation", text: `H(η) = inf over |v| ≤ ${MARGIN_SCORE_BOUND} of ηφ(v) + (1−η)φ(−v), by a grid scan with golden refinement.` });
  if (!scan.invertible) {
    findings.push({
      code: "margin-no-link",
      clause: "margin",
      message: `The margin loss has no invertible link: ${scan.reason ?? "the implied inverse link is not strictly increasing"}, so probabilities cannot be recovered from scores (Reid & Williamson 2010, Cor. 14).`,
      data: { flat: scan.flat },
    });
    // Without a link the partial losses on q use a minimising score v*(q) of the conditional risk at η = q (not unique).
    const vstar = memoise((q: number) => globalMin((v) => marginRisk(phi, q, v), -MARGIN_SCORE_BOUND, MARGIN_SCORE_BOUND, MARGIN_MIN_GRID, 3).x);
    const l1 = (q: number) => phi(vstar(q));
    const l0 = (q: number) => phi(-vstar(q));
    notes.push({ kind: "derivation", text: "No invertible link: l1(q) = φ(v*(q)) and l0(q) = φ(−v*(q)) with v*(q) a minimiser of the risk at η = q (not unique)." });
    const fns = assemble(spec, {
      l1,
      l0,
      dl1: (q) => diffInUnit(l1, q),
      dl0: (q) => diffInUnit(l0, q),
      bayes: Hmargin,
      weight: null,
      margin: phi,
      notes,
    });
    return { fns, findings };
  }
  const vlo = scan.vlo;
  const vhi = scan.vhi;
  const link = memoise(marginLinkFromInverse(inv, vlo, vhi));
  // d/dv of φ'(−v)/(φ'(−v)+φ'(v)) = −(φ''(−v)·φ'(v) + φ'(−v)·φ''(v)) / (φ'(−v)+φ'(v))², so ψ' needs no difference of the bisection.
  const dinv = (v: number) => {
    const a = dphi(-v);
    const b = dphi(v);
    return -(d2phi(-v) * b + a * d2phi(v)) / ((a + b) * (a + b));
  };
  const dlink = (q: number) => 1 / dinv(link(q));
  const l1 = (q: number) => phi(link(q));
  const l0 = (q: number) => phi(-link(q));
  const dl1 = (q: number) => dphi(link(q)) * dlink(q);
  const dl0 = (q: number) => -dphi(-link(q)) * dlink(q);
  const risk = riskOf(l1, l0);
  // Both the score minimisation and L(η, η) are upper bounds of the infimum; the smaller is the better estimate.
  const bayes = (eta: number) => {
    const a = Hmargin(eta);
    const b = risk(eta, eta);
    return Number.isFinite(b) ? Math.min(a, b) : a;
  };
  notes.push({ kind: "link", text: `Implied link from ψ⁻¹(v) = φ'(−v)/(φ'(−v)+φ'(v)) (Reid & Williamson 2010, Cor. 14) on v ∈ [${fmt(vlo)}, ${fmt(vhi)}], inverted by bisection.` });
  const fns = assemble(spec, {
    l1,
    l0,
    dl1,
    dl0,
    bayes,
    weight: stationarityWeight(dl1, dl0),
    link: { link, dlink, inverseLink: inv },
    margin: phi,
    notes,
  });
  return { fns, findings };
}

function deriveScorePartials(spec: LossSpec): DeriveResult {
  const findings: Finding[] = [];
  const notes: Note[] = [];
  if (!spec.l1 || !spec.l0) {
    return { fns: null, findings: [{ code: "analysis-unknown", clause: "loss", message: "Both partial losses l1(v) and l0(v) are needed to analyse this loss." }] };
  }
  if (!spec.link) {
    const reason = spec.canonicalLink
      ? "a canonical link is defined from the loss on probabilities, which partial losses written in the score do not give"
      : "partial losses in the score need a link(q) clause";
    return { fns: null, findings: [{ code: "analysis-unknown", clause: "link", message: `Cannot analyse this loss: ${reason}.` }] };
  }
  const lam1 = guard(spec.l1)!;
  const lam0 = guard(spec.l0)!;
  const dlam1 = guard(spec.dl1) ?? ((v: number) => diffOnLine(lam1, v));
  const dlam0 = guard(spec.dl0) ?? ((v: number) => diffOnLine(lam0, v));
  const link = guard(spec.link)!;
  const inverse = guard(spec.inverse);
  const ok = checkLink(link, inverse, findings);
  if (!ok) return { fns: null, findings };
  const dlink = guard(spec.dlink) ?? ((q: number) => diffInUnit(link, q));
  const l1 = (q: number) => lam1(link(q));
  const l0 = (q: number) => lam0(link(q));
  // Chain rule: d/dq λ_y(ψ(q)) = λ_y'(ψ(q))·ψ'(q).
  const dl1 = (q: number) => dlam1(link(q)) * dlink(q);
  const dl0 = (q: number) => dlam0(link(q)) * dlink(q);
  const mismatch = findings.some((f) => f.code === "inverse-mismatch");
  notes.push({ kind: "derivation", text: "Partial losses on q are λ_y(ψ(q)); H(η) = inf_q L(η, q) by a grid scan with golden refinement." });
  const fns = assemble(spec, {
    l1,
    l0,
    dl1,
    dl0,
    weight: stationarityWeight(dl1, dl0),
    link: { link, dlink, inverseLink: inverse && !mismatch ? inverse : numericInverse(link) },
    notes,
  });
  return { fns, findings };
}

/**
 * Derives the common model from a loss in any definition form. Never throws: an exception in a user
 * closure or in the derivation becomes an "internal-error" finding with `fns: null`.
 */
export function deriveLossFunctions(spec: LossSpec): DeriveResult {
  try {
    switch (spec.form) {
      case "partials":
        return derivePartials(spec);
      case "bayes":
        return deriveBayes(spec);
      case "weight":
        return deriveWeight(spec);
      case "margin":
        return deriveMargin(spec);
      case "score-partials":
        return deriveScorePartials(spec);
      default:
        return { fns: null, findings: [{ code: "analysis-unknown", clause: "loss", message: `Unknown definition form.` }] };
    }
  } catch (e) {
    return { fns: null, findings: [internalError("the derivation of the loss functions", e)] };
  }
}
