/**
 * Parameters and consent in the generators: `expect improper` is consent (the header still warns),
 * headers are re-analysed at the values baked in with --set, an improper value is refused without
 * consent, the file's own recovery `def` is used, and refuted `expect` claims are listed in the header.
 */
import { describe, expect, it } from "vitest";
import { generate } from "../../server/src/codegen/index.js";
import { analyseDocument } from "../../server/src/pipeline/pipeline.js";
import { decode, pythonHas, runNumpy } from "./support.js";

const HAS_NUMPY = pythonHas("numpy");

const TEXT = `loss scaled_brier(c = 1 in [0.5, 4]) {
  l1(q) = c * (1 - q)^2
  l0(q) = c * q^2
}
loss power(g = 2 in [1.5, 4]) {
  l1(q) = (1 - q)^g
  l0(q) = q^g
}
loss cubic {
  l1(q) = (1 - q)^3
  l0(q) = q^3
  expect improper
}
loss cubic_unclaimed {
  l1(q) = (1 - q)^3
  l0(q) = q^3
}
loss brier_logit {
  l1(q) = (1 - q)^2
  l0(q) = q^2
  link(q) = logit(q)
  expect convex
}
def cubic_recovery(q) = q^2 / (q^2 + (1 - q)^2)
def cubic_unclaimed_recovery(q) = q
`;

describe("consent and parameters in generated code", () => {
  const doc = analyseDocument(TEXT);

  it("`expect improper` is consent: generated without --allow-improper, and the header still warns", () => {
    const r = generate(doc, { target: "numpy", loss: "cubic", sourceName: "t.loss" });
    expect(r.ok, r.ok ? "" : r.message).toBe(true);
    if (!r.ok) return;
    expect(r.code).toMatch(/^# WARNING: improper loss .*The file says `expect improper` \(consent to generate it\)/m);
  });

  it("an improper loss without the claim still needs --allow-improper", () => {
    const r = generate(doc, { target: "numpy", loss: "cubic_unclaimed", sourceName: "t.loss" });
    expect(r.ok).toBe(false);
    if (!r.ok) expect(r.message).toMatch(/improper.*--allow-improper.*expect improper/);
  });

  it("the header's figures are re-analysed at the values baked in with --set", () => {
    // Brier score scaled by c: w(q) = −l1'(q)/(1 − q) = 2c, so λ = inf w = 2c (weight of the Brier score is 2:
    // Buja, Stuetzle & Shen 2005, "Loss functions for binary class probability estimation", §15).
    const at3 = generate(doc, { target: "ts", loss: "scaled_brier", overrides: { c: 3 }, sourceName: "t.loss" });
    const at1 = generate(doc, { target: "ts", loss: "scaled_brier", sourceName: "t.loss" });
    if (!at3.ok || !at1.ok) throw new Error("not generated");
    expect(at3.code).toMatch(/^\/\/ lambda \(inf of the weight function\): 6$/m);
    expect(at3.code).toMatch(/re-analysed at the parameter values baked in/);
    expect(at1.code).toMatch(/^\/\/ lambda \(inf of the weight function\): 2$/m);
    expect(at1.code).not.toMatch(/re-analysed/);
  });

  it("a value that makes the loss improper is refused under --set without consent, and generated with it", () => {
    // (1 − q)^g, q^g is proper only at g = 2 (the Brier score); at g = 3 the minimiser is q*(η) with
    // q²/(q² + (1 − q)²) = η, not η (closed form, stationarity of the conditional risk).
    const refused = generate(doc, { target: "numpy", loss: "power", overrides: { g: 3 }, sourceName: "t.loss" });
    expect(refused.ok).toBe(false);
    if (!refused.ok) expect(refused.message).toMatch(/improper at g = 3/);
    const proper = generate(doc, { target: "numpy", loss: "power", sourceName: "t.loss" });
    expect(proper.ok).toBe(true);
    const allowed = generate(doc, { target: "numpy", loss: "power", overrides: { g: 3 }, allowImproper: true, sourceName: "t.loss" });
    expect(allowed.ok && allowed.code).toMatch(/^# verdict: improper \(re-analysed at the parameter values baked in\)/m);
  });

  it("the file's own recovery def is used when it agrees with the derived map, and not otherwise", () => {
    const r = generate(doc, { target: "numpy", loss: "cubic", sourceName: "t.loss" });
    if (!r.ok) throw new Error(r.message);
    expect(r.code).toMatch(/^def cubic_recovery\(q\):/m);
    expect(r.code).not.toMatch(/cubic_recover_posterior/);
    expect(r.code).toMatch(/the file's own `def cubic_recovery`/);
    // `cubic_unclaimed_recovery(q) = q` is not the recovery map of that loss: the generator writes its own.
    const u = generate(doc, { target: "ts", loss: "cubic_unclaimed", allowImproper: true, sourceName: "t.loss" });
    if (!u.ok) throw new Error(u.message);
    expect(u.code).toMatch(/export function cubicUnclaimedRecoverPosterior\(/);
  });

  it.skipIf(!HAS_NUMPY)("the user's recovery def computes η = q²/(q² + (1 − q)²)", () => {
    const r = generate(doc, { target: "numpy", loss: "cubic", sourceName: "t.loss" });
    if (!r.ok) throw new Error(r.message);
    const qs = [0.1, 0.3, 0.5, 0.8];
    const out = runNumpy(r.code, [{ fn: "cubic_recovery", args: [qs] }]);
    (decode(out[0]!) as number[]).forEach((eta, i) => expect(eta).toBeCloseTo(qs[i]! ** 2 / (qs[i]! ** 2 + (1 - qs[i]!) ** 2), 12));
  });

  it("a refuted `expect convex` claim is listed in the header", () => {
    // Brier through the logit link is not convex in the score: l1(σ(v)) = (1 − σ(v))² has a negative second
    // derivative for large v (Buja et al. 2005 discuss the composite Brier loss; checked by the engine).
    const r = generate(doc, { target: "torch", loss: "brier_logit", input: "score", sourceName: "t.loss" });
    if (!r.ok) throw new Error(r.message);
    expect(r.code).toMatch(/^# FAILED CLAIM: Claim "expect convex" fails/m);
  });
});
