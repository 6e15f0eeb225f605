/**
 * Tests of convexity in the score for composite losses: Reid & Williamson 2010, "Composite Binary
 * Losses", JMLR 11, Thm 24 eq. (17), Cor. 26 (identity link) and Thm 28 (canonical links are convex).
 * Row ids (C…, F…, K…, L…, N…, P…) are rows of test/reference/proper-losses.md, which gives each one's source.
 */
import { describe, expect, it } from "vitest";
import { checkCompositeConvexity, checkEq17 } from "../../server/src/analysis/composite.js";
import { deriveLossFunctions } from "../../server/src/analysis/derive.js";
import { analyseProperness } from "../../server/src/analysis/properness.js";
import type { LossSpec } from "../../server/src/loss-model.js";
import { BOOSTING, HALF_LOGIT, LOG_NATS, familyOf, focal, partials, withLink } from "./standard-losses.js";

const logit = (q: number) => Math.log(q / (1 - q));
const fnsOf = (spec: LossSpec) => deriveLossFunctions(spec).fns!;

describe("RW10 Thm 24 eq. (17)", () => {
  it.each([
    // Row N39 / RW10 Cor. 26: fails exactly on (0, ¼).
    ["boosting + identity link", withLink(BOOSTING, "b-id", (q) => q, () => 1, () => 0), false],
    // Row K7 (computed from RW10 eq. (17)): the middle term is −½(1/x − 1/(1−x)) with the half-logit link, inside the bounds.
    ["boosting + half-logit link", withLink(BOOSTING, "b-hl", HALF_LOGIT, (q) => 0.5 / (q * (1 - q)), (q) => (0.5 * (2 * q - 1)) / (q * (1 - q)) ** 2), true],
    // RW10 Thm 28: the canonical link (logit for log loss) is convex.
    ["log + logit link", withLink(LOG_NATS, "l-logit", logit, (q) => 1 / (q * (1 - q))), true],
    // RW10 Cor. 26 with w = 2 constant: 0 lies in [−1/x, 1/(1−x)].
    ["Brier + identity link", withLink(partials("brier", (q) => (1 - q) ** 2, (q) => q * q, (q) => -2 * (1 - q), (q) => 2 * q), "br-id", (q) => q, () => 1, () => 0), true],
    // Agarwal 2014, Ex. 3: 4(1−q)², 4q² with link 2q − 1 is the squared loss (1 − yv)², convex.
    ["Ag14 squared + link 2q−1", withLink(partials("sq", (q) => 4 * (1 - q) ** 2, (q) => 4 * q * q, (q) => -8 * (1 - q), (q) => 8 * q), "sq", (q) => 2 * q - 1, () => 2, () => 0), true],
  ] as const)("%s → convex = %s", (_n, spec, convex) => {
    const r = checkEq17(fnsOf(spec), spec.d2link ?? null);
    expect(r.convex).toBe(convex);
    expect(r.findings.length).toBe(convex ? 0 : 1);
  });

  it("boosting + identity link: the failing interval ends at q = ¼ (N39, RW10 Cor. 26)", () => {
    const r = checkEq17(fnsOf(withLink(BOOSTING, "b-id", (q) => q, () => 1, () => 0)), () => 0);
    const f = r.findings[0]!;
    expect(f.code).toBe("not-convex-in-score");
    expect(f.clause).toBe("link");
    const [a, b] = f.data!["interval"] as [number, number];
    expect(a).toBe(0);
    expect(Math.abs(b - 0.25)).toBeLessThan(1e-6);
    expect(f.data!["side"]).toBe("lower");
  });

  it("numeric link derivatives (no closed form given) reach the same verdicts (computed: central differences)", () => {
    expect(checkEq17(fnsOf(withLink(BOOSTING, "b-id", (q) => q))).convex).toBe(false);
    expect(checkEq17(fnsOf(withLink(BOOSTING, "b-hl", HALF_LOGIT))).convex).toBe(true);
  });

  it("the canonical link (ψ' = w) makes log loss convex (RW10 Thm 28)", () => {
    expect(checkEq17(fnsOf({ ...LOG_NATS, canonicalLink: true })).convex).toBe(true);
  });
});

describe("through analyseProperness", () => {
  it("boosting + identity link: strictly proper with a not-convex-in-score warning on the link", () => {
    const r = analyseProperness(familyOf(withLink(BOOSTING, "b-id", (q) => q, () => 1, () => 0)));
    expect(r.verdict).toBe("strictly-proper");
    expect(r.findings.map((f) => f.code)).toEqual(["not-convex-in-score"]);
  });

  it("logistic in score partials with the logit link: strictly proper and convex, no findings (Agarwal 2014, Ex. 2)", () => {
    const spec: LossSpec = {
      name: "logistic",
      form: "score-partials",
      params: {},
      threshold: 0.5,
      l1: (v) => Math.log1p(Math.exp(-v)),
      l0: (v) => Math.log1p(Math.exp(v)),
      dl1: (v) => -1 / (1 + Math.exp(v)),
      dl0: (v) => 1 / (1 + Math.exp(-v)),
      link: logit,
      dlink: (q) => 1 / (q * (1 - q)),
    };
    const r = analyseProperness(familyOf(spec));
    expect(r.verdict).toBe("strictly-proper");
    expect(r.findings).toEqual([]);
  });

  it("an improper loss with a link falls back to second differences in v: focal γ = 2 with the logit link is not convex, λ1'' < 0 near v = −3.85 (computed: dense second differences of −(1−σ(v))² ln σ(v), minimum −0.047 at v ≈ −3.847)", () => {
    const fns = fnsOf(withLink(focal(2), "focal-logit", logit, (q) => 1 / (q * (1 - q))));
    const r = checkCompositeConvexity(fns, false);
    expect(r.method).toBe("second-differences");
    expect(r.convex).toBe(false);
    const v = r.findings[0]!.data!["v"] as number;
    // Any point of the concave stretch is valid evidence; it lies on the negative side around −3.85.
    expect(v).toBeLessThan(0);
    expect(v).toBeGreaterThan(-8);
  });

  it("score partials that are concave in v are reported not convex (computed: λ1(v) = e^{−v} − ½ sin v has λ1'' = e^{−v} + ½ sin v < 0 near v = 3π/2)", () => {
    const spec: LossSpec = { name: "c", form: "score-partials", params: {}, threshold: 0.5, l1: (v) => Math.exp(-v) - 0.5 * Math.sin(v), l0: (v) => Math.exp(v), link: HALF_LOGIT };
    const fns = fnsOf(spec);
    const r = checkCompositeConvexity(fns, false);
    expect(r.convex).toBe(false);
    expect(r.findings[0]?.code).toBe("not-convex-in-score");
  });
});
