/**
 * Regression tests of issue 11, item 1: decisions of the properness engine are invariant under scaling
 * the loss, and a positive verdict says what it rests on and is backed by the derivative identities where
 * the derivatives are closed forms, so features narrower than the scan grid are found.
 *
 * Sources: properness is invariant under L ↦ cL, c > 0 (the minimisers of L(η, ·) do not move; Reid &
 * Williamson 2010, "Composite Binary Losses", JMLR 11, §3, definition of properness); a differentiable
 * proper loss satisfies −l1'(q)/(1−q) = l0'(q)/q = w(q) ≥ 0 (Reid & Williamson 2010, Thm 1; Savage 1971,
 * "Elicitation of Personal Probabilities and Expectations", JASA 66). Rows of table L (log, Brier, spherical,
 * boosting, focal) cite test/reference/proper-losses.md via standard-losses.ts.
 */
import { describe, expect, it } from "vitest";
import fc from "fast-check";
import { analyseProperness, type PropernessResult } from "../../server/src/analysis/properness.js";
import { seededRandom } from "../../server/src/analysis/numeric/sampling.js";
import { nearlyEqual } from "../../server/src/analysis/numeric/tolerance.js";
import { analyseDocument } from "../../server/src/pipeline/pipeline.js";
import type { LossSpec, RealFn } from "../../server/src/loss-model.js";
import { analyseFamily } from "../../server/src/analysis/analyse.js";
import { BOOSTING, LOG_NATS, MARGIN_EXP, weight, MARGIN_HINGE, MARGIN_LOGISTIC, MARGIN_SQUARED, STANDARD_LOSSES, costWeighted, familyOf, focal, partials } from "./standard-losses.js";

const sq = (x: number) => x * x;

/** The counterexample is real: both risks re-evaluate from the closures with L(η, q) < L(η, η). */
function expectConfirmed(r: PropernessResult): void {
  const ce = r.counterexample!;
  expect(ce).not.toBeNull();
  expect(nearlyEqual(r.fns!.risk(ce.eta, ce.q), ce.riskAtQ)).toBe(true);
  expect(nearlyEqual(r.fns!.risk(ce.eta, ce.eta), ce.riskAtEta)).toBe(true);
  expect(ce.riskAtQ).toBeLessThan(ce.riskAtEta);
}

/** A partials (or weight) spec with every closure (and derivative) multiplied by c. */
function scaled(spec: LossSpec, c: number): LossSpec {
  const times = (f: RealFn | undefined) => (f ? (q: number) => c * f(q) : undefined);
  if (spec.form === "weight") return { ...spec, name: `${spec.name}×${c}`, weight: times(spec.weight)! };
  const out: LossSpec = { ...spec, name: `${spec.name}×${c}`, l1: times(spec.l1)!, l0: times(spec.l0)! };
  const d1 = times(spec.dl1);
  const d0 = times(spec.dl0);
  if (d1) out.dl1 = d1;
  else delete out.dl1;
  if (d0) out.dl0 = d0;
  else delete out.dl0;
  return out;
}

/** Brier with the partial losses on different scales, l1 = (1−q)², l0 = 1.5q²: ratios 2 ≠ 3, improper (Reid & Williamson 2010, Thm 1). */
const BRIER_MISMATCHED = partials("brier-mismatched", (q) => sq(1 - q), (q) => 1.5 * q * q, (q) => -2 * (1 - q), (q) => 3 * q);
/** Its minimiser, computed: d/dq [η(1−q)² + 1.5(1−η)q²] = 0 at q* = η / (η + 1.5(1−η)). */
const mismatchedMinimiser = (eta: number) => eta / (eta + 1.5 * (1 - eta));
/** Spherical score (row L7) with closed-form derivatives, computed: l1' = −(1−q)/n³, l0' = q/n³, n = ‖(q, 1−q)‖₂ (so w = 1/n³). */
const norm = (q: number) => Math.sqrt(q * q + sq(1 - q));
const SPHERICAL_D = partials("spherical", (q) => 1 - q / norm(q), (q) => 1 - (1 - q) / norm(q), (q) => -(1 - q) / norm(q) ** 3, (q) => q / norm(q) ** 3);
const BRIER = partials("brier", (q) => sq(1 - q), (q) => q * q, (q) => -2 * (1 - q), (q) => 2 * q);

describe("reproduction: an improper loss scaled by 1e-9 (issue 11)", () => {
  it.each([
    // The reproduction: l1 = 1e-9(1−q)², l0 = 1e-9·1.5q² was called strictly proper with no diagnostic.
    { name: "1e-9 × mismatched Brier (the reproduction)", spec: partials("tiny", (q) => 1e-9 * sq(1 - q), (q) => 1e-9 * 1.5 * q * q) },
    { name: "1e-9 × mismatched Brier with closed-form derivatives", spec: scaled(BRIER_MISMATCHED, 1e-9) },
    { name: "1e-15 × mismatched Brier", spec: scaled(BRIER_MISMATCHED, 1e-15) },
    { name: "1e+12 × mismatched Brier", spec: scaled(BRIER_MISMATCHED, 1e12) },
  ])("$name → improper, with the computed minimiser q* = η/(η + 1.5(1−η))", ({ spec }) => {
    const r = analyseProperness(familyOf(spec));
    expect(r.verdict).toBe("improper");
    expectConfirmed(r);
    const ce = r.counterexample!;
    // The refined counterexample sits at the minimiser of L(η, ·), whatever the scale.
    expect(Math.abs(ce.q - mismatchedMinimiser(ce.eta))).toBeLessThan(1e-6);
    expect(r.findings.some((f) => f.code === "improper")).toBe(true);
  });
});

describe("property: the verdict is unchanged under scaling the partial losses by 10^k, k ∈ [−20, 20]", () => {
  const table: { spec: LossSpec; verdict: PropernessResult["verdict"]; source: string }[] = [
    { spec: BRIER, verdict: "strictly-proper", source: "row L3: Bao 2023, COLT, §4" },
    { spec: LOG_NATS, verdict: "strictly-proper", source: "row L1: Reid & Williamson 2010, Table 1" },
    { spec: SPHERICAL_D, verdict: "strictly-proper", source: "row L7: Gneiting & Raftery 2007, JASA 102, §3" },
    { spec: BOOSTING, verdict: "strictly-proper", source: "row L8: Buja, Stuetzle & Shen 2005" },
    { spec: BRIER_MISMATCHED, verdict: "improper", source: "Reid & Williamson 2010, Thm 1 (ratios 2 ≠ 3)" },
    { spec: focal(2), verdict: "improper", source: "row L17: Charoenphakdee et al. 2021, CVPR" },
    { spec: costWeighted(0.2), verdict: "proper", source: "row L12: Reid & Williamson 2010, Table 1 (w = δ(q − c))" },
  ];
  it.each(table.map((row) => [row.spec.name, row] as const))("%s", (_n, row) => {
    expect(analyseProperness(familyOf(row.spec)).verdict, row.source).toBe(row.verdict);
    fc.assert(
      fc.property(fc.integer({ min: -20, max: 20 }), (k) => {
        const r = analyseProperness(familyOf(scaled(row.spec, 10 ** k)));
        expect(r.verdict, `${row.source}; scaled by 1e${k}`).toBe(row.verdict);
        if (row.verdict === "improper") expectConfirmed(r);
        else expect(r.counterexample).toBeNull();
      }),
      { seed: 20261111, numRuns: 10, examples: [[-20], [20], [-9]] },
    );
  });
});

/** A Gaussian bump a·exp(−((q − c)/w)²) and its derivative. */
function bump(a: number, c: number, w: number): { f: RealFn; df: RealFn } {
  const g = (q: number) => a * Math.exp(-sq((q - c) / w));
  return { f: g, df: (q) => (g(q) * -2 * (q - c)) / (w * w) };
}

/** Brier with a bump on l1 (side 1) or l0 (side 0), with closed-form derivatives. */
function bumpedBrier(side: 0 | 1, a: number, c: number, w: number, withDerivatives = true): LossSpec {
  const b = bump(a, c, w);
  const l1 = side === 1 ? (q: number) => sq(1 - q) + b.f(q) : (q: number) => sq(1 - q);
  const l0 = side === 0 ? (q: number) => q * q + b.f(q) : (q: number) => q * q;
  if (!withDerivatives) return partials("bumped", l1, l0);
  const dl1 = side === 1 ? (q: number) => -2 * (1 - q) + b.df(q) : (q: number) => -2 * (1 - q);
  const dl0 = side === 0 ? (q: number) => 2 * q + b.df(q) : (q: number) => 2 * q;
  return partials("bumped", l1, l0, dl1, dl0);
}

describe("reproduction: an improper bump of width 1e-4 between grid points (issue 11)", () => {
  // l1 = (1−q)² + 0.01·exp(−((q − 0.4137)/1e-4)²), l0 = q²: improper, since the bump breaks the identity (RW10, Thm 1).
  const C = 0.4137;
  const W = 1e-4;

  it("with closed-form derivatives: improper, the counterexample re-evaluated and within ten widths of the bump", () => {
    const r = analyseProperness(familyOf(bumpedBrier(1, 0.01, C, W)));
    expect(r.verdict).toBe("improper");
    expectConfirmed(r);
    expect(Math.abs(r.counterexample!.eta - C)).toBeLessThan(10 * W);
  });

  it("through the notation (symbolic derivatives of the compiler): improper, with an improper finding", () => {
    const text = "loss bumped {\n  l1(q) = (1 - q)^2 + 0.01*exp(-((q - 0.4137)/0.0001)^2)\n  l0(q) = q^2\n}\n";
    const doc = analyseDocument(text);
    const a = doc.losses[0]!.analysis!;
    expect(a.verdict).toBe("improper");
    const ce = a.counterexample!;
    expect(ce.riskAtQ).toBeLessThan(ce.riskAtEta);
    expect(Math.abs(ce.eta - C)).toBeLessThan(10 * W);
    expect(doc.issues.some((i) => i.code === "improper")).toBe(true);
  });

  it("without closed-form derivatives the verdict rests on sampling alone, and its note says so", () => {
    const r = analyseProperness(familyOf(bumpedBrier(1, 0.01, C, W, false)));
    // The bump is invisible to the sampled search at the default resolution; the verdict must not hide that.
    expect(r.verdict).toBe("strictly-proper");
    expect(r.evidence?.identity).toBeNull();
    expect(r.evidence?.gridPoints).toBeGreaterThan(200);
    const note = r.fns!.notes.find((n) => n.kind === "verdict-evidence");
    expect(note?.text).toMatch(/No counterexample at resolution \d+ grid points; .*sampling alone/);
  });
});

describe("narrow bumps at random centres are found where the derivatives reveal them", () => {
  // Seeded: widths log-uniform in [1e-4, 1e-3], centres uniform in (0.05, 0.95), amplitude ±0.01, on l1 or l0.
  const rnd = seededRandom(1111);
  const rows = Array.from({ length: 12 }, (_, i) => {
    const w = 10 ** (-4 + rnd());
    const c = 0.05 + 0.9 * rnd();
    const a = (rnd() < 0.5 ? -1 : 1) * 0.01;
    return { i, side: (i % 2) as 0 | 1, partial: i % 2 ? "l1" : "l0", a, c, w };
  });
  it.each(rows)("bump $i: amplitude $a at c = $c, width $w, on $partial → improper at the bump", ({ side, a, c, w }) => {
    const r = analyseProperness(familyOf(bumpedBrier(side, a, c, w)));
    expect(r.verdict).toBe("improper");
    expectConfirmed(r);
    // The counterexample points at the bump: η on its flank (a bump raises L near η) or q in it (a dip lowers L at q).
    const ce = r.counterexample!;
    expect(Math.min(Math.abs(ce.eta - c), Math.abs(ce.q - c))).toBeLessThan(10 * w);
  });
});

describe("weight form: the sign of w on the refined grid finds a narrow negative dip", () => {
  // w = 1 − 3·exp(−((q − c)/width)²) is negative on a stretch of width ≈ 2·width·√(ln 3) around c, so H is convex there
  // and the loss is improper (Reid & Williamson 2010, Thm 6: proper iff w ≥ 0). The dips sit between points of the scan table.
  it.each([
    { c: 0.6211, width: 3e-4 },
    { c: 0.2719, width: 1e-3 },
  ])("dip at c = $c, width $width → improper, counterexample re-evaluated near the dip", ({ c, width }) => {
    const r = analyseProperness(familyOf(weight("dip", (q) => 1 - 3 * Math.exp(-sq((q - c) / width)))));
    expect(r.verdict).toBe("improper");
    expectConfirmed(r);
    expect(Math.abs(r.counterexample!.eta - c)).toBeLessThan(0.01);
  });
});

describe("a positive verdict says what it rests on (verdict-evidence note)", () => {
  it.each([
    { spec: BRIER, source: "row L3" },
    { spec: LOG_NATS, source: "row L1" },
    { spec: SPHERICAL_D, source: "row L7" },
    { spec: BOOSTING, source: "row L8" },
  ])("$spec.name: the identity backed the verdict on the refined grid, with no finding added ($source)", ({ spec }) => {
    const r = analyseProperness(familyOf(spec));
    expect(r.verdict).toBe("strictly-proper");
    expect(r.findings).toEqual([]);
    expect(r.evidence?.identity?.points).toBeGreaterThan(1000);
    expect(r.evidence?.identity?.unexplainedAt).toBeNull();
    const note = r.fns!.notes.find((n) => n.kind === "verdict-evidence");
    expect(note?.text).toMatch(/No counterexample at resolution \d+ grid points; the stationarity identity/);
  });

  it("a violation of the identity that no descent confirms is named in the note, not hidden (bump 1e-10 high, 1e-5 wide at 0.50002)", () => {
    // Improper in exact arithmetic (RW10, Thm 1), but the best gap (≈ 0.5·1e-10) is below the gap tolerance RISK_TOL_DIRECT × scale.
    const r = analyseProperness(familyOf(bumpedBrier(1, 1e-10, 0.50002, 1e-5)));
    expect(r.verdict).toBe("strictly-proper");
    expect(Math.abs(r.evidence!.identity!.unexplainedAt! - 0.50002)).toBeLessThan(1e-4);
    const note = r.fns!.notes.find((n) => n.kind === "verdict-evidence");
    expect(note?.text).toMatch(/fails near q = 0\.5.*no descent from there beat the tolerance/);
  });

  it("an improper loss gets no verdict-evidence note (its verdict rests on a counterexample)", () => {
    const r = analyseProperness(familyOf(focal(2)));
    expect(r.evidence).toBeUndefined();
    expect(r.fns!.notes.some((n) => n.kind === "verdict-evidence")).toBe(false);
  });
});

describe("λ = inf w scales with the loss: λ(cL) = c·λ(L), and λ = 0 stays 0, for c = 10^k, k ∈ [−20, 20]", () => {
  const beta22 = STANDARD_LOSSES.find((r) => r.id === "10c Beta(2,2) weight")!.spec;
  it.each([
    { spec: BRIER, lambda: 2, source: "row L3: Agarwal 2014, JMLR 15, Table 1 (λ = 2)" },
    { spec: LOG_NATS, lambda: 4, source: "row L1: Agarwal 2014, JMLR 15, Ex. 2 (λ = 4)" },
    { spec: BOOSTING, lambda: 4, source: "row N3: Agarwal 2014, JMLR 15, Ex. 1 (λ = 4)" },
    { spec: beta22, lambda: 0, source: "row L10c: w = q(1 − q) → 0 at the endpoints, λ = 0 approached there" },
  ])("$spec.name: λ = $lambda ($source)", ({ spec, lambda, source }) => {
    for (const k of [-20, -12, -9, -3, 0, 6, 20]) {
      const c = 10 ** k;
      const a = analyseFamily(familyOf(scaled(spec, c)));
      expect(a.verdict, `${source}; ×1e${k}`).toBe("strictly-proper");
      if (lambda === 0) expect(a.lambda, `${source}; ×1e${k}`).toBe(0);
      else expect(Math.abs(a.lambda! / c - lambda), `${source}; ×1e${k}: λ = ${a.lambda}`).toBeLessThan(1e-6 * lambda);
    }
  });
});

describe("margin losses: verdict and findings unchanged under φ ↦ 10^k·φ, k ∈ [−20, 20]", () => {
  /** The margin spec with φ and its derivatives multiplied by c. */
  const scaledMargin = (spec: LossSpec, c: number): LossSpec => {
    const out: LossSpec = { ...spec, name: `${spec.name}×${c}`, margin: (v) => c * spec.margin!(v) };
    if (spec.dmargin) out.dmargin = (v) => c * spec.dmargin!(v);
    if (spec.d2margin) out.d2margin = (v) => c * spec.d2margin!(v);
    return out;
  };
  it.each([
    // Rows of test/reference/proper-losses.md: K2 exponential = boosting (L8) with the half-logit link; K1 logistic = log loss
    // (L1) with the logit; K3 squared = Agarwal's squared loss (L6) with the link 2q − 1; K5 hinge: no invertible link.
    { spec: MARGIN_EXP, verdict: "strictly-proper" },
    { spec: MARGIN_LOGISTIC, verdict: "strictly-proper" },
    { spec: MARGIN_SQUARED, verdict: "strictly-proper" },
    { spec: MARGIN_HINGE, verdict: "improper" },
  ])("$spec.name", ({ spec, verdict }) => {
    const base = analyseProperness(familyOf(spec));
    expect(base.verdict).toBe(verdict);
    const codes = (r: PropernessResult) => [...new Set(r.findings.map((f) => f.code))].sort();
    for (const k of [-20, -9, -3, 3, 9, 20]) {
      const r = analyseProperness(familyOf(scaledMargin(spec, 10 ** k)));
      expect(r.verdict, `×1e${k}`).toBe(base.verdict);
      expect(codes(r), `×1e${k}`).toEqual(codes(base));
    }
  });
});
