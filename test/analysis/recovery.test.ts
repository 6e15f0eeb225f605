/**
 * Tests of posterior recovery for improper losses: η = l0'(q*)/(l0'(q*) − l1'(q*)) (Reid & Williamson
 * 2010, Cor. 12), for the focal loss of Charoenphakdee, Vongkulbhisal, Chairatanakul & Sugiyama 2021,
 * "On Focal Loss for Class-Posterior Probability Estimation: A Theoretical Perspective", CVPR.
 * Row ids (C…, F…, K…, L…, N…, P…) are rows of test/reference/proper-losses.md, which gives each one's source.
 */
import { describe, expect, it } from "vitest";
import { analyseProperness } from "../../server/src/analysis/properness.js";
import { deriveLossFunctions } from "../../server/src/analysis/derive.js";
import { computeRecovery, minimiseRisk, recoveryMap } from "../../server/src/analysis/recovery.js";
import { LOG_NATS, familyOf, focal, partials } from "./standard-losses.js";

const fnsOf = (g: number) => deriveLossFunctions(focal(g)).fns!;

describe("focal loss (table F and N35–N36, computed with mpmath at 40 digits)", () => {
  it.each([
    [2, 0.7, 0.5784799858],
    [2, 0.9, 0.6942128051],
    [1, 0.7, 0.6172303148],
    [1, 0.9, 0.7744253518],
  ])("γ = %s, η = %s: q* = %s and the map recovers η to 1e-9", (g, eta, qStar) => {
    const fns = fnsOf(g);
    const m = minimiseRisk(fns, eta);
    expect(Math.abs(m.q - qStar)).toBeLessThan(1e-9);
    const map = recoveryMap(fns);
    expect(Math.abs(map(m.q) - eta)).toBeLessThan(1e-9);
    // From the published 10-digit q*, too (its rounding moves η by less than 1e-9).
    expect(Math.abs(map(qStar) - eta)).toBeLessThan(1e-9);
  });

  it("the map equals the h-transform η = h(q)/(h(q)+h(1−q)), h(v) = v/[(1−v)^γ − γv(1−v)^{γ−1} ln v] (table F: RW10 Cor. 12 applied to the focal partials, computed)", () => {
    for (const g of [1, 2, 3.5]) {
      const h = (v: number) => v / ((1 - v) ** g - g * v * (1 - v) ** (g - 1) * Math.log(v));
      const map = recoveryMap(fnsOf(g));
      for (const q of [0.2, 0.45, 0.6, 0.8]) expect(Math.abs(map(q) - h(q) / (h(q) + h(1 - q)))).toBeLessThan(1e-12);
    }
  });

  it("computeRecovery: q*(η) monotone and the largest error over 21 η below 1e-8", () => {
    const rec = computeRecovery(fnsOf(2))!;
    expect(rec.monotone).toBe(true);
    expect(rec.samples.length).toBe(21);
    expect(rec.maxError).toBeLessThan(1e-8);
  });

  it("analyseProperness reports posterior-recovery and the minimiser curve for focal γ = 2", () => {
    const r = analyseProperness(familyOf(focal(2)));
    expect(r.findings.map((f) => f.code)).toContain("posterior-recovery");
    expect(r.recovery?.monotone).toBe(true);
    expect(r.minimiser!.etas.length).toBe(r.minimiser!.qs.length);
    // Focal predictions are pulled towards ½ (CVCS21): q* < η above ½.
    const i = r.minimiser!.etas.indexOf(0.9);
    expect(r.minimiser!.qs[i]!).toBeLessThan(0.9);
  });
});

describe("other cases", () => {
  it("for a proper loss the map is the identity (RW10 Cor. 12 with the identity link): log loss", () => {
    const map = recoveryMap(deriveLossFunctions(LOG_NATS).fns!);
    for (const q of [0.1, 0.5, 0.77]) expect(Math.abs(map(q) - q)).toBeLessThan(1e-12);
  });

  it("hinge with linear partials: minimisers at the endpoints, so no recovery map (null) and no finding (row L14b, computed)", () => {
    const spec = partials("hinge-linear", (q) => 2 * (1 - q), (q) => 2 * q, () => -2, () => 2);
    expect(computeRecovery(deriveLossFunctions(spec).fns!)).toBeNull();
    const r = analyseProperness(familyOf(spec));
    expect(r.recovery).toBeNull();
    expect(r.findings.map((f) => f.code)).not.toContain("posterior-recovery");
    // The minimiser curve is still sampled: q* = 0 below ½ and q* = 1 above (L(η, q) is linear in q, computed).
    const { etas, qs } = r.minimiser!;
    etas.forEach((eta, i) => {
      if (eta < 0.5) expect(qs[i]).toBe(0);
      if (eta > 0.5) expect(qs[i]).toBe(1);
    });
  });
});
