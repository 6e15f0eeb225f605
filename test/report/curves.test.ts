/**
 * The data-to-series mapping of the curve viewer and the report (`computeCurves`): which series come
 * out, gaps for non-finite samples, clipped axes for unbounded curves, the conditional-risk minimiser.
 */
import { readFileSync, writeFileSync } from "node:fs";
import * as path from "node:path";
import { describe, expect, it } from "vitest";
import { nearlyEqual } from "../../server/src/analysis/numeric/tolerance.js";
import { analyseDocument } from "../../server/src/pipeline/pipeline.js";
import { CLIP_INTERIOR, computeCurves, DEFAULT_ETAS, suggestRange } from "../../server/src/products/curves.js";
import type { CurvesResult, LossCurves } from "../../server/src/protocol.js";

/** Minimisers are found by a grid scan, golden section and a bisection polish: 1e-6 is far above their error. */
const MINIMISER_TOL = 1e-6;
/** Samples of closed-form partial losses are exact to a few ulps. */
const SAMPLE_TOL = 1e-12;

const SOURCE = `
loss log_loss {
  l1(q) = -ln(q)
  l0(q) = -ln(1 - q)
  link(q) = logit(q)
}

loss brier {
  l1(q) = (1 - q)^2
  l0(q) = q^2
}

loss focal(g = 2 in [0, 5]) {
  l1(q) = -(1 - q)^g * ln(q)
  l0(q) = -q^g * ln(1 - q)
}

loss asymmetric {
  l1(q) = (1 - q)^2
  l0(q) = 1.5 * q^2
}

loss holey {
  l1(q) = (1 - q)^2 + sqrt(q - 0.3) - sqrt(q - 0.3)
  l0(q) = q^2
}

loss broken {
  l1(q) = (1 - q)^2 +
}
`;

const doc = analyseDocument(SOURCE);
const curves: CurvesResult = computeCurves(doc, { uri: "test://curves.loss", points: 101 });

function lossOf(r: CurvesResult, name: string): LossCurves {
  const l = r.losses.find((x) => x.loss === name);
  if (!l) throw new Error(`no curves for ${name}: ${JSON.stringify(r.skipped)}`);
  return l;
}

function sampleAt(s: { x: number[]; y: (number | null)[] }, x: number): number | null | undefined {
  const i = s.x.findIndex((v) => nearlyEqual(v, x));
  return i < 0 ? undefined : s.y[i];
}

describe("computeCurves: series", () => {
  it("draws every well-formed loss and skips the one with errors, with a reason", () => {
    expect(curves.losses.map((l) => l.loss)).toEqual(["log_loss", "brier", "focal", "asymmetric", "holey"]);
    expect(curves.skipped).toHaveLength(1);
    expect(curves.skipped[0]!.loss).toBe("broken");
    expect(curves.skipped[0]!.reason).toMatch(/error/);
  });

  it("gives a strictly proper composite loss all series: 2 partials, H, w, δ and δ**, two bound routes, the link, 19 η", () => {
    const l = lossOf(curves, "log_loss");
    expect(l.verdict).toBe("strictly-proper");
    expect(l.partials.map((s) => s.id)).toEqual(["l1", "l0"]);
    expect(l.bayes).not.toBeNull();
    expect(l.weight).not.toBeNull();
    expect(l.modulus.map((s) => s.id)).toEqual(["delta", "delta-envelope"]);
    expect(l.bounds.map((s) => s.id)).toEqual(["bound-modulus", "bound-direct"]);
    expect(l.link).not.toBeNull();
    expect(l.conditionalRisk.map((c) => c.eta)).toEqual([...DEFAULT_ETAS]);
    expect(l.minimiser?.x).toEqual([...DEFAULT_ETAS]);
    for (const s of [...l.partials, l.bayes!, l.weight!, l.link!]) expect(s.x).toHaveLength(101);
  });

  it("has no link series for a loss without a link", () => {
    expect(lossOf(curves, "brier").link).toBeNull();
  });

  it("samples the partial losses from their closed forms", () => {
    // The log loss is ℓ1(q) = −ln q, ℓ0(q) = −ln(1 − q) (Gneiting & Raftery 2007, "Strictly Proper Scoring Rules", JASA 102, Eq. 22 — the logarithmic score).
    const log = lossOf(curves, "log_loss");
    expect(nearlyEqual(sampleAt(log.partials[0]!, 0.5)!, Math.LN2, SAMPLE_TOL)).toBe(true);
    expect(nearlyEqual(sampleAt(log.partials[1]!, 0.8)!, -Math.log(0.2), 1e-9)).toBe(true);
    // The Brier score (Brier 1950, Monthly Weather Review 78): ℓ1 = (1 − q)², ℓ0 = q².
    const brier = lossOf(curves, "brier");
    expect(nearlyEqual(sampleAt(brier.partials[0]!, 0.3)!, 0.49, SAMPLE_TOL)).toBe(true);
    expect(nearlyEqual(sampleAt(brier.partials[1]!, 0.3)!, 0.09, SAMPLE_TOL)).toBe(true);
  });
});

describe("computeCurves: gaps and clipping", () => {
  it("turns the infinite endpoints of the log loss into null gaps, with a note", () => {
    const log = lossOf(curves, "log_loss");
    expect(sampleAt(log.partials[0]!, 0)).toBeNull();
    expect(sampleAt(log.partials[1]!, 1)).toBeNull();
    expect(typeof sampleAt(log.partials[0]!, 1)).toBe("number");
    expect(log.notes.some((n) => /l1\(q\).*not finite/.test(n))).toBe(true);
    // JSON cannot carry NaN or Infinity: every sample of every series is a finite number or null.
    const all = [...log.partials, log.bayes!, log.weight!, ...log.modulus, ...log.bounds, log.link!, ...log.conditionalRisk.map((c) => c.series)];
    for (const s of all) for (const v of s.y) expect(v === null || Number.isFinite(v)).toBe(true);
  });

  it("turns NaN samples inside (0,1) into null gaps, with a note", () => {
    // sqrt(q − 0.3) is NaN below 0.3, so ℓ1 of `holey` is undefined on [0, 0.3) and (1 − q)² above.
    const holey = lossOf(curves, "holey");
    const l1 = holey.partials[0]!;
    const below = l1.x.map((x, i) => ({ x, y: l1.y[i] })).filter((p) => p.x < 0.3 - 1e-9);
    const above = l1.x.map((x, i) => ({ x, y: l1.y[i] })).filter((p) => p.x > 0.3 + 1e-9);
    expect(below.length).toBeGreaterThan(20);
    expect(below.every((p) => p.y === null)).toBe(true);
    expect(above.every((p) => typeof p.y === "number" && nearlyEqual(p.y, (1 - p.x) ** 2, 1e-9))).toBe(true);
    expect(holey.notes.some((n) => /l1\(q\): \d+ samples? not finite/.test(n))).toBe(true);
  });

  it("clips the axis of an unbounded weight and says so", () => {
    // The log loss has w(q) = 1/(q(1−q)) (Reid & Williamson 2010, "Composite Binary Losses", JMLR 11, Table 1), unbounded at 0 and 1.
    const log = lossOf(curves, "log_loss");
    const range = log.ranges?.weight;
    expect(range).toBeDefined();
    const finite = log.weight!.y.filter((v): v is number => v !== null);
    expect(Math.max(...finite)).toBeGreaterThan(range![1]);
    // The axis still shows the whole interior part of the curve.
    expect(range![1]).toBeGreaterThan(1 / (CLIP_INTERIOR * (1 - CLIP_INTERIOR)));
    expect(log.notes.some((n) => /weight axis is clipped/.test(n))).toBe(true);
    // The Brier weight is the constant 2: nothing to clip.
    expect(lossOf(curves, "brier").notes.some((n) => /clipped/.test(n))).toBe(false);
  });

  it("suggestRange: clips a spike at an endpoint, keeps a bounded curve, and returns null for nothing finite", () => {
    const xs = Array.from({ length: 101 }, (_, i) => i / 100);
    const spike = suggestRange([{ id: "s", label: "s", x: xs, y: xs.map((x) => (x === 0 ? 1e6 : 1)) }]);
    expect(spike?.clipped).toBe(true);
    expect(spike!.range[1]).toBeLessThan(1e6);
    const smooth = suggestRange([{ id: "s", label: "s", x: xs, y: xs.map((x) => x * x) }]);
    expect(smooth).toEqual({ range: [0, 1], clipped: false });
    expect(suggestRange([{ id: "s", label: "s", x: xs, y: xs.map(() => null) }])).toBeNull();
  });
});

describe("computeCurves: conditional risk and its minimiser", () => {
  it("is minimised at q = η for proper losses", () => {
    // Proper: L(η, ·) is minimised at q = η (Gneiting & Raftery 2007, Def. of a proper scoring rule, Sect. 2).
    for (const name of ["log_loss", "brier"]) {
      for (const c of lossOf(curves, name).conditionalRisk) expect(Math.abs(c.minimiser - c.eta)).toBeLessThan(MINIMISER_TOL);
    }
  });

  it("finds the focal minimiser away from η", () => {
    const focal = lossOf(curves, "focal");
    expect(focal.verdict).toBe("improper");
    const c = focal.conditionalRisk.find((x) => nearlyEqual(x.eta, 0.7))!;
    // test/reference/proper-losses.md, rows N35 and F1 (computed: root of ∂L/∂q at 40 digits) for the focal loss of
    // Lin et al. 2017 as analysed by Charoenphakdee et al. 2021, "On Focal Loss for Class-Posterior Probability Estimation", CVPR: γ = 2, η = 0.7.
    expect(Math.abs(c.minimiser - 0.5784799858)).toBeLessThan(MINIMISER_TOL);
    expect(nearlyEqual(c.minimumRisk!, 0.1548042439, 1e-8)).toBe(true);
    expect(Math.abs(c.minimiser - c.eta)).toBeGreaterThan(0.1);
    expect(focal.notes.some((n) => /not minimised at q = η/.test(n))).toBe(true);
  });

  it("matches the closed-form minimiser of the scaled Brier loss, which is not η", () => {
    // Computed: d/dq [η(1−q)² + 1.5(1−η)q²] = 0 gives q* = η / (η + 1.5(1 − η)).
    const asym = lossOf(curves, "asymmetric");
    for (const c of asym.conditionalRisk) {
      const expected = c.eta / (c.eta + 1.5 * (1 - c.eta));
      expect(Math.abs(c.minimiser - expected)).toBeLessThan(MINIMISER_TOL);
    }
    expect(asym.minimiser!.y.some((q, i) => Math.abs(q! - asym.minimiser!.x[i]!) > 0.05)).toBe(true);
  });

  it("leaves the weight, modulus and bound curves empty for a loss that is not strictly proper, with a note", () => {
    for (const name of ["focal", "asymmetric"]) {
      const l = lossOf(curves, name);
      expect(l.verdict).toBe("improper");
      expect(l.weight).toBeNull();
      expect(l.modulus).toEqual([]);
      expect(l.bounds).toEqual([]);
      expect(l.figures?.lambda).toBeNull();
      expect(l.notes.some((n) => /not drawn: the loss is improper/.test(n))).toBe(true);
      // The curves of the loss itself are still drawn.
      expect(l.partials).toHaveLength(2);
      expect(l.conditionalRisk).toHaveLength(DEFAULT_ETAS.length);
    }
  });
});

describe("computeCurves: requests from the viewer", () => {
  it("redraws at slider values: the focal loss at g = 0 is the log loss, minimised at η", () => {
    const r = computeCurves(doc, { uri: "test://curves.loss", losses: ["focal"], overrides: { focal: { g: 0 } }, points: 51, etas: [0.3, 0.7] });
    expect(r.losses).toHaveLength(1);
    const focal = r.losses[0]!;
    expect(focal.params).toEqual([{ name: "g", value: 0, lo: 0, hi: 5 }]);
    // Charoenphakdee et al. 2021 (CVPR), Sect. 3: γ = 0 recovers the cross-entropy, which is strictly proper.
    expect(focal.verdict).toBe("strictly-proper");
    for (const c of focal.conditionalRisk) expect(Math.abs(c.minimiser - c.eta)).toBeLessThan(MINIMISER_TOL);
    expect(focal.conditionalRisk.map((c) => c.eta)).toEqual([0.3, 0.7]);
    expect(focal.partials[0]!.x).toHaveLength(51);
  });

  it("clamps slider values to the declared range and ignores unknown parameters, with notes", () => {
    const r = computeCurves(doc, { uri: "u", losses: ["focal"], overrides: { focal: { g: 9, zz: 1 } }, points: 21, etas: [0.7] });
    const focal = r.losses[0]!;
    expect(focal.params[0]!.value).toBe(5);
    expect(focal.notes.some((n) => /clamped to 5/.test(n))).toBe(true);
    expect(focal.notes.some((n) => /unknown parameter `zz`/.test(n))).toBe(true);
  });

  it("reports a requested loss that does not exist", () => {
    const r = computeCurves(doc, { uri: "u", losses: ["nope"], points: 21 });
    expect(r.losses).toEqual([]);
    expect(r.skipped).toEqual([{ loss: "nope", reason: "no loss of that name in the document" }]);
  });

  it("reuses the curves of unchanged losses (a copy each time) while one loss's slider moves", () => {
    const params = { uri: "u", losses: ["brier", "asymmetric"], points: 41, etas: [0.25, 0.75] };
    const first = computeCurves(doc, params);
    first.losses[0]!.partials[0]!.y[0] = -1;
    const t0 = Date.now();
    const second = computeCurves(doc, params);
    const reuseMs = Date.now() - t0;
    expect(second.losses[0]!.partials[0]!.y[0]).toBe(1);
    expect(second.losses.map((l) => l.loss)).toEqual(["brier", "asymmetric"]);
    // Sampling a loss takes hundreds of milliseconds (curvature models, minimisations); a reuse is a copy.
    expect(reuseMs).toBeLessThan(100);
    const moved = computeCurves(doc, { ...params, losses: ["brier"], overrides: { brier: {} } });
    expect(moved.losses[0]!.partials[0]!.y[0]).toBe(1);
  });
});

// `UPDATE_FIXTURES=1 npx vitest run test/report/curves.test.ts` rewrites the browser tests' fixture from
// samples/flood-desk.loss (101 points, 19 η, numbers rounded to 6 significant digits to keep it small).
describe.runIf(process.env.UPDATE_FIXTURES)("fixture update", () => {
  it("rewrites test/report/fixtures/flood-desk-curves.json", () => {
    const root = path.resolve(__dirname, "..", "..");
    const sample = analyseDocument(readFileSync(path.join(root, "samples", "flood-desk.loss"), "utf8"));
    const r = computeCurves(sample, { uri: "file:///samples/flood-desk.loss", points: 101 });
    const round = (_k: string, v: unknown) => (typeof v === "number" && Number.isFinite(v) && !Number.isInteger(v) ? Number(v.toPrecision(6)) : v);
    writeFileSync(path.join(__dirname, "fixtures", "flood-desk-curves.json"), JSON.stringify(r, round) + "\n");
    expect(r.losses.length).toBeGreaterThan(0);
  });
});
