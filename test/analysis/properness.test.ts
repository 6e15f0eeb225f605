/**
 * Tests of the properness engine: verdicts for the standard losses of table L, improper
 * constructions of our own, bad input, parameter ranges, time-boxing and claims. Each check names its
 * published source, or says "computed" and how.
 * Row ids (C…, F…, K…, L…, N…, P…) are rows of test/reference/proper-losses.md, which gives each one's source.
 */
import { describe, expect, it } from "vitest";
import fc from "fast-check";
import { analyseProperness, evaluateClaims, type PropernessResult } from "../../server/src/analysis/properness.js";
import type { Claim, LossFamily, LossSpec } from "../../server/src/loss-model.js";
import { ISSUE_CODES } from "../../server/src/issues.js";
import { nearlyEqual } from "../../server/src/analysis/numeric/tolerance.js";
import { minimiseRisk } from "../../server/src/analysis/recovery.js";
import {
  BOOSTING,
  LOG_NATS,
  STANDARD_LOSSES,
  bayes,
  costWeighted,
  familyOf,
  focal,
  focalFamily,
  partials,
  weight,
  withLink,
} from "./standard-losses.js";

const codes = (r: PropernessResult) => r.findings.map((f) => f.code);
const errors = (r: PropernessResult) => r.findings.filter((f) => (f.severity ?? ISSUE_CODES[f.code].severity) === "error");
const entropy = (q: number) => -q * Math.log(q) - (1 - q) * Math.log(1 - q);

describe("standard losses (table L; sources per row in standard-losses.ts)", () => {
  it.each(STANDARD_LOSSES.map((row) => [row.id, row] as const))("%s", (_id, row) => {
    const r = analyseProperness(familyOf(row.spec));
    expect(r.verdict, `${row.source}: ${JSON.stringify(r.findings)}`).toBe(row.verdict);
    if (row.verdict === "improper") {
      const ce = r.counterexample!;
      expect(ce).not.toBeNull();
      // The counterexample is real: both risks re-evaluate from the closures with L(η,q) < L(η,η).
      expect(nearlyEqual(r.fns!.risk(ce.eta, ce.q), ce.riskAtQ)).toBe(true);
      expect(nearlyEqual(r.fns!.risk(ce.eta, ce.eta), ce.riskAtEta)).toBe(true);
      expect(ce.riskAtQ).toBeLessThan(ce.riskAtEta);
      expect(r.findings.find((f) => f.code === "improper")?.clause).toBe("loss");
    } else {
      expect(r.counterexample).toBeNull();
      // No false alarm on any proper row: no error-severity findings at all.
      expect(errors(r)).toEqual([]);
    }
    if (row.verdict === "proper") {
      const fi = r.flatInterval!;
      expect(fi).not.toBeNull();
      const match = row.flatIntervals!.some(([a, b]) => Math.abs(fi[0] - a) < 1e-6 && Math.abs(fi[1] - b) < 1e-6);
      expect(match, JSON.stringify(fi)).toBe(true);
      expect(codes(r)).toContain("proper-not-strict");
    } else {
      expect(r.flatInterval).toBeNull();
    }
  });

  it("cost-weighted ℓ_c at c = 0.2 is affine on [0, 0.2] and [0.2, 1], the widest reported (Reid & Williamson 2010, Table 1: w = δ(q − c))", () => {
    const r = analyseProperness(familyOf(costWeighted(0.2)));
    expect(r.flatInterval).toEqual([0.2, 1]);
    expect(r.findings.find((f) => f.code === "proper-not-strict")?.data?.["intervals"]).toEqual([
      [0, 0.2],
      [0.2, 1],
    ]);
  });

  it("hinge with linear partials: the counterexample shows impropriety, L(0.7,1) = 0.6 < L(0.7,0.7) = 0.84 (N38, computed)", () => {
    const r = analyseProperness(familyOf(partials("hinge-linear", (q) => 2 * (1 - q), (q) => 2 * q)));
    expect(r.verdict).toBe("improper");
    expect(nearlyEqual(r.fns!.risk(0.7, 0.7), 0.84)).toBe(true);
    expect(nearlyEqual(r.fns!.risk(0.7, 1), 0.6)).toBe(true);
    // The minimiser sits at an endpoint (row L14b, computed): q = 0 or 1.
    expect([0, 1]).toContain(r.counterexample!.q);
  });

  it("focal γ = 2 at η = 0.7: q* = 0.5784799858, L(η,η) = 0.1994545237 > L(η,q*) = 0.1548042439 (N35 and F1, computed with mpmath; Charoenphakdee et al. 2021, CVPR: focal is not proper)", () => {
    const r = analyseProperness(familyOf(focal(2)));
    expect(r.verdict).toBe("improper");
    const m = minimiseRisk(r.fns!, 0.7);
    expect(Math.abs(m.q - 0.5784799858)).toBeLessThan(1e-9);
    expect(Math.abs(r.fns!.risk(0.7, 0.7) - 0.1994545237)).toBeLessThan(1e-9);
    expect(Math.abs(m.risk - 0.1548042439)).toBeLessThan(1e-9);
    // At η = ½ the minimiser is ½ by symmetry (table F, computed), so a check of η = ½ alone would miss this.
    expect(Math.abs(minimiseRisk(r.fns!, 0.5).q - 0.5)).toBeLessThan(1e-8);
  });
});

describe("flat intervals and strictness (Bao 2023, Thm 2: strictly proper iff H strictly concave; Reid & Williamson 2010, Thm 6)", () => {
  it.each([
    // w = 0 on [0.3, 0.7] and 1 outside: H is affine exactly there (computed from the integral representation).
    { name: "weight 0 on [0.3, 0.7]", spec: weight("gap", (q) => (q < 0.3 || q > 0.7 ? 1 : 0)), interval: [0.3, 0.7], tol: 1e-6 },
    // w = max(0, q − 0.6): affine on [0, 0.6]; the right end is resolved where the mean weight reaches the tolerance (computed).
    { name: "weight max(0, q − 0.6)", spec: weight("ramp", (q) => Math.max(0, q - 0.6)), interval: [0, 0.6], tol: 1e-3 },
    // H = min(η, 1−η) with its one-sided derivative: the 0-1 loss again (Bao 2023, §5), via the Bayes form.
    { name: "Bayes form min(η, 1−η) with H'", spec: bayes("zero-one-bayes", (q) => Math.min(q, 1 - q), (q) => (q < 0.5 ? 1 : -1)), interval: [0, 0.5], tol: 1e-9 },
    // ℓ_c at c = 0.2037, off the grid: w = δ(q − c) (RW10 Table 1), affine on [0, c] and [c, 1]; the end is located by bisection.
    { name: "cost-weighted at c = 0.2037 (off the grid)", spec: costWeighted(0.2037), interval: [0.2037, 1], tol: 1e-9 },
    // A constant loss: H is affine on all of [0, 1] (every prediction is optimal).
    { name: "constant loss", spec: partials("const", () => 1, () => 1), interval: [0, 1], tol: 0 },
  ])("$name → proper with flat interval", ({ spec, interval, tol }) => {
    const r = analyseProperness(familyOf(spec));
    expect(r.verdict).toBe("proper");
    expect(Math.abs(r.flatInterval![0] - interval[0]!)).toBeLessThanOrEqual(tol);
    expect(Math.abs(r.flatInterval![1] - interval[1]!)).toBeLessThanOrEqual(tol);
  });

  it.each([
    // Pseudo-spherical α = 5: w ~ q³ near 0 is tiny but positive, so H is strictly concave (GR07 family; row L15).
    ["pseudo-spherical α = 5", (() => {
      const a = 5;
      const n = (q: number) => Math.pow(q ** a + (1 - q) ** a, 1 / a);
      return partials("ps5", (q) => 1 - q ** (a - 1) / n(q) ** (a - 1), (q) => 1 - (1 - q) ** (a - 1) / n(q) ** (a - 1));
    })()],
    // Polynomial entropy α = 6: w = 30|q − ½|⁴ vanishes only at ½ (Bao 2023, App. B.5).
    ["polynomial entropy α = 6", bayes("poly6", (q) => 2 ** -6 - Math.abs(q - 0.5) ** 6, (q) => -6 * Math.abs(q - 0.5) ** 5 * Math.sign(q - 0.5))],
    // w = 1/q (asymmetric, row N34): strictly proper (Bao 2023, Thm 2: w > 0).
    ["weight 1/q", weight("inv-q", (q) => 1 / q)],
    // A narrow but positive bump on a small floor: w > 0 everywhere (computed).
    ["weight 1e-3 + narrow bump", weight("bump", (q) => 1e-3 + Math.exp(-(((q - 0.37) / 0.002) ** 2)))],
    // Brier plus 0.01·ℓ_c with c = 0.3137 (w = 2 + 0.01·δ(q − c), RW10 Thm 6): jumps matched in the ratio (1−c) : c.
    ["Brier + 0.01·ℓ_c at c = 0.3137", partials("brier-lc", (q) => (1 - q) ** 2 + (q < 0.3137 ? 0.01 * 0.6863 : 0), (q) => q * q + (q >= 0.3137 ? 0.01 * 0.3137 : 0))],
    // Adding constants to the partial losses does not change properness (row C1: Reid & Williamson 2010, §3.1, fairness).
    ["log loss plus constants", partials("log-offset", (q) => 3 - Math.log(q), (q) => 7 - Math.log(1 - q))],
    ["log loss × 1e6", partials("log-big", (q) => -1e6 * Math.log(q), (q) => -1e6 * Math.log(1 - q))],
    ["log loss × 1e-6", partials("log-small", (q) => -1e-6 * Math.log(q), (q) => -1e-6 * Math.log(1 - q))],
  ])("%s → strictly proper, no findings", (_n, spec) => {
    const r = analyseProperness(familyOf(spec));
    expect(r.verdict).toBe("strictly-proper");
    expect(r.findings).toEqual([]);
  });
});

describe("improper constructions (computed: perturbations of Brier and log loss)", () => {
  const brier1 = (q: number) => (1 - q) ** 2;
  const brier0 = (q: number) => q * q;
  it.each([
    {
      name: "broken only above ½ (l1 gets +0.05(q−½)² for q > ½)",
      spec: partials("above", (q) => brier1(q) + (q > 0.5 ? 0.05 * (q - 0.5) ** 2 : 0), brier0),
      etaRange: [0.5, 1],
      expectCodes: ["improper", "l1-increasing", "stationarity-mismatch"],
    },
    {
      name: "broken only near an endpoint (l0 loses 0.5(q−0.98)² above 0.98)",
      spec: partials("endpoint", brier1, (q) => brier0(q) - (q > 0.98 ? 0.5 * (q - 0.98) ** 2 : 0)),
      etaRange: [0.98, 1],
      expectCodes: ["improper", "stationarity-mismatch"],
    },
    {
      name: "a tiny bump (1e-5 Gaussian of width 0.01 on l0 at 0.3)",
      spec: partials("bump", brier1, (q) => brier0(q) + 1e-5 * Math.exp(-(((q - 0.3) / 0.01) ** 2))),
      etaRange: [0.25, 0.35],
      expectCodes: ["improper", "stationarity-mismatch"],
    },
    {
      name: "a small downward jump of 1e-3 in l0 at 0.50123, between grid points",
      spec: partials("down-jump", brier1, (q) => brier0(q) - (q > 0.50123 ? 1e-3 : 0)),
      etaRange: [0.49, 0.51],
      expectCodes: ["improper", "l0-decreasing"],
    },
    {
      name: "a tiny downward jump of 1e-5 in l0 at 0.30123",
      spec: partials("tiny-jump", brier1, (q) => brier0(q) - (q > 0.30123 ? 1e-5 : 0)),
      etaRange: [0.29, 0.31],
      expectCodes: ["improper", "l0-decreasing"],
    },
    {
      // Jumps of sizes −0.007 in l1 and +0.003137 in l0 at c = 0.3137 do not match ℓ_c's (1−c) : c ratio (RW10 Table 1), so η = c prefers q just above c.
      name: "mismatched jumps at c = 0.3137 (not a multiple of ℓ_c)",
      spec: partials("jump-pair", (q) => brier1(q) + (q < 0.3137 ? 0.007 : 0), (q) => brier0(q) + (q >= 0.3137 ? 0.003137 : 0)),
      etaRange: [0.3, 0.33],
      expectCodes: ["improper"],
    },
    {
      name: "a jump up in l1 at 0.4 (discontinuity)",
      spec: partials("jump", (q) => brier1(q) + (q > 0.4 ? 0.1 : 0), brier0),
      etaRange: [0, 1],
      expectCodes: ["improper", "l1-increasing"],
    },
    {
      name: "a Bayes risk that is not concave (q(1−q) + 0.2 sin(6q) q²)",
      spec: bayes("nonconcave", (q) => q * (1 - q) + 0.2 * Math.sin(6 * q) * q * q),
      etaRange: [0, 1],
      expectCodes: ["improper", "bayes-not-concave"],
    },
    {
      name: "a weight that is negative somewhere (cos 8q)",
      spec: weight("negative", (q) => Math.cos(8 * q)),
      etaRange: [0, 1],
      expectCodes: ["improper", "weight-negative"],
    },
  ])("$name", ({ spec, etaRange, expectCodes }) => {
    const r = analyseProperness(familyOf(spec));
    expect(r.verdict).toBe("improper");
    const ce = r.counterexample!;
    expect(ce.riskAtQ).toBeLessThan(ce.riskAtEta);
    expect(ce.eta).toBeGreaterThanOrEqual(etaRange[0]!);
    expect(ce.eta).toBeLessThanOrEqual(etaRange[1]!);
    for (const c of expectCodes) expect(codes(r)).toContain(c);
  });

  it("a wrong constant in a declared Bayes risk gives bayes-mismatch by that constant, while the partials stay proper (Savage representation, Bao 2023, Thm 1)", () => {
    const r = analyseProperness(familyOf({ ...LOG_NATS, bayes: (q) => entropy(q) + 0.1 }));
    expect(r.verdict).toBe("strictly-proper");
    const f = r.findings.find((x) => x.code === "bayes-mismatch")!;
    expect(f.clause).toBe("bayes");
    expect(Math.abs(Math.abs(f.data!["difference"] as number) - 0.1)).toBeLessThan(1e-6);
  });

  it("the correct declared Bayes risk of log loss gives no finding (Reid & Williamson 2010, Table 1)", () => {
    const r = analyseProperness(familyOf({ ...LOG_NATS, bayes: entropy }));
    expect(r.findings).toEqual([]);
  });

  it("a non-concave declared Bayes risk next to partials gives bayes-not-concave on the bayes clause", () => {
    const r = analyseProperness(familyOf({ ...LOG_NATS, bayes: (q) => q * q }));
    expect(r.findings.find((f) => f.code === "bayes-not-concave")?.clause).toBe("bayes");
  });
});

describe("bad input: a finding or unknown with a reason, never a throw or hang", () => {
  it.each([
    { name: "overflow exp(1000q) in l1", spec: partials("overflow", (q) => Math.exp(1000 * q), (q) => q), code: "non-finite-value" },
    { name: "NaN inside (sqrt of a negative number)", spec: partials("nan", (q) => Math.sqrt(0.5 - q), (q) => q), code: "non-finite-value" },
    {
      name: "a closure that throws",
      spec: partials("throws", (q) => {
        if (q > 0.3) throw new Error("boom");
        return 1 - q;
      }, (q) => q),
      code: "non-finite-value",
    },
    { name: "divergent weight integral 1/q²", spec: weight("div", (q) => 1 / (q * q)), code: "weight-not-integrable" },
    { name: "missing partial", spec: { name: "m", form: "partials", params: {}, threshold: 0.5, l1: (q: number) => 1 - q } as LossSpec, code: "analysis-unknown" },
  ])("$name → $code", ({ spec, code }) => {
    const r = analyseProperness(familyOf(spec));
    expect(codes(r)).toContain(code);
    if (r.verdict === "unknown") expect(codes(r)).toContain("analysis-unknown");
  });

  it("NaN on (0.6, 0.61) of a loss that is otherwise Brier: verdict unknown with the reason and the point", () => {
    const r = analyseProperness(familyOf(partials("hole", (q) => (q > 0.6 && q < 0.61 ? NaN : (1 - q) ** 2), (q) => q * q)));
    expect(r.verdict).toBe("unknown");
    const f = r.findings.find((x) => x.code === "non-finite-value")!;
    expect(f.clause).toBe("l1");
    expect(f.data!["q"]).toBeGreaterThan(0.6);
    expect(f.data!["q"]).toBeLessThan(0.61);
    expect(codes(r)).toContain("analysis-unknown");
  });

  it("l1(0) = ∞ is allowed for regular losses: log loss has no findings (Bao 2023, §2 regularity)", () => {
    const r = analyseProperness(familyOf(partials("log", (q) => -Math.log(q), (q) => -Math.log(1 - q))));
    expect(r.verdict).toBe("strictly-proper");
    expect(r.findings).toEqual([]);
  });

  it("a family whose instantiate throws gives internal-error and verdict unknown", () => {
    const fam: LossFamily = { name: "x", form: "partials", params: [], claims: [], instantiate: () => { throw new Error("no"); } };
    const r = analyseProperness(fam);
    expect(r.verdict).toBe("unknown");
    expect(codes(r)).toEqual(["internal-error"]);
  });

  it("a slow loss is time-boxed: verdict unknown with analysis-unknown (time limit), returned promptly", () => {
    const slow = (f: (q: number) => number) => (q: number) => {
      const t = performance.now();
      while (performance.now() - t < 0.02) {
        // Busy-wait to make every evaluation slow.
      }
      return f(q);
    };
    const t0 = Date.now();
    const r = analyseProperness(familyOf(partials("slow", slow((q) => (1 - q) ** 2), slow((q) => q * q))), { deadlineMs: 5 });
    expect(r.verdict).toBe("unknown");
    expect(r.findings.find((f) => f.code === "analysis-unknown")?.message).toMatch(/time limit/);
    expect(Date.now() - t0).toBeLessThan(5000);
  });

  it("the same seed gives the same result (seeded sampling)", () => {
    const a = analyseProperness(familyOf(focal(2)), { seed: 7 });
    const b = analyseProperness(familyOf(focal(2)), { seed: 7 });
    expect(a.counterexample).toEqual(b.counterexample);
  });
});

describe("parameter ranges", () => {
  it("focal g ∈ [0,5]: improper at the default, report 'improper for g > 0; proper at g = 0' (g = 0 is log loss; Charoenphakdee et al. 2021, CVPR)", () => {
    const r = analyseProperness(focalFamily());
    expect(r.verdict).toBe("improper");
    expect(r.paramReport).toBe("improper for g > 0; proper at g = 0");
  });

  it("proper at the default g = 0 but improper elsewhere: improper-in-range on param:g with the value", () => {
    const r = analyseProperness(focalFamily([], 0));
    expect(r.verdict).toBe("strictly-proper");
    const f = r.findings.find((x) => x.code === "improper-in-range")!;
    expect(f.clause).toBe("param:g");
    expect((f.data!["values"] as Record<string, number>)["g"]).toBeGreaterThan(0);
  });

  it("two parameters: perturbed Brier b(1−q)² + 0.1·a·q(1−q), b q² is proper only at a = 0 (computed: the a-term adds a slope at q = η)", () => {
    const fam: LossFamily = {
      name: "two",
      form: "partials",
      params: [
        { name: "a", default: 0, lo: 0, hi: 1 },
        { name: "b", default: 1, lo: 0.5, hi: 2 },
      ],
      claims: [],
      instantiate: (v) => partials("two", (q) => v["b"]! * (1 - q) ** 2 + v["a"]! * 0.1 * q * (1 - q), (q) => v["b"]! * q * q),
    };
    const r = analyseProperness(fam);
    expect(r.verdict).toBe("strictly-proper");
    expect(r.paramReport).toContain("improper for a > 0; proper at a = 0");
    expect(r.paramReport).toContain("proper for all b in [0.5, 2]");
    expect(r.findings.find((f) => f.code === "improper-in-range")?.clause).toBe("param:a");
  });

  it.each([
    // Computed: the term k(a)·0.1·q(1−q) added to the Brier l1 gives ∂L/∂q = −0.1·k(a)·η(1−2η) ≠ 0 at q = η, so the loss is improper exactly where k(a) > 0.
    { label: "proper in the middle", lo: -1, hi: 1, def: 0, k: (a: number) => Math.max(0, Math.abs(a) - 0.5), report: "improper for a ≤ -0.5002; improper for a ≥ 0.5002; proper for -0.5002 ≤ a ≤ 0.5002" },
    { label: "improper above 1.3", lo: 0, hi: 2, def: 0.5, k: (a: number) => Math.max(0, a - 1.3), report: "improper for a ≥ 1.3; proper for a ≤ 1.3" },
    { label: "proper only at the upper end", lo: 0, hi: 1, def: 1, k: (a: number) => 1 - a, report: "improper for a < 1; proper at a = 1" },
    { label: "proper only at an interior value", lo: 0, hi: 2, def: 1, k: (a: number) => Math.abs(a - 1), report: "improper for a ≠ 1 in [0, 2]; proper at a = 1" },
  ])("range report, $label", ({ lo, hi, def, k, report }) => {
    const fam: LossFamily = {
      name: "p",
      form: "partials",
      params: [{ name: "a", default: def, lo, hi }],
      claims: [],
      instantiate: (v) => partials("p", (q) => (1 - q) ** 2 + k(v["a"]!) * 0.1 * q * (1 - q), (q) => q * q),
    };
    const r = analyseProperness(fam);
    expect(r.verdict).toBe("strictly-proper");
    expect(r.paramReport).toBe(report);
    expect(r.findings.map((f) => f.code)).toEqual(["improper-in-range"]);
  });

  it("a family proper over its whole range has no range findings (Brier scaled by s ∈ [0.5, 3]; Bao 2023, §4)", () => {
    const fam: LossFamily = {
      name: "scaled",
      form: "partials",
      params: [{ name: "s", default: 1, lo: 0.5, hi: 3 }],
      claims: [],
      instantiate: (v) => partials("scaled", (q) => v["s"]! * (1 - q) ** 2, (q) => v["s"]! * q * q),
    };
    const r = analyseProperness(fam);
    expect(r.findings).toEqual([]);
    expect(r.paramReport).toBe("proper for all s in [0.5, 3] (sampled)");
  });
});

describe("claims", () => {
  const claim = (kind: Claim["kind"], index = 0, value = 0): Claim => (kind === "lambda-at-least" || kind === "exponent-at-least" ? { index, kind, value } : ({ index, kind } as Claim));
  const run = (spec: LossSpec, claims: Claim[], extra = {}) => {
    const fam = familyOf(spec, claims);
    return evaluateClaims(fam, analyseProperness(fam), extra);
  };
  it.each([
    // Charoenphakdee et al. 2021, CVPR: focal is not strictly proper.
    ["focal: expect strictly proper", focal(2), claim("strictly-proper"), "expect-failed"],
    ["focal: expect improper", focal(2), claim("improper"), null],
    // Reid & Williamson 2010, Table 1: log loss is strictly proper.
    ["log: expect proper", LOG_NATS, claim("proper"), null],
    ["log: expect improper", LOG_NATS, claim("improper"), "expect-failed"],
    // 0-1 loss is proper but not strictly (RW10 footnote 6).
    ["0-1: expect strictly proper", costWeighted(0.5), claim("strictly-proper"), "expect-failed"],
    ["0-1: expect proper", costWeighted(0.5), claim("proper"), null],
    // Composite convexity: boosting with the identity link is not convex, with the half-logit link it is (N39, K7: Reid & Williamson 2010, Thm 24, Cor. 26).
    ["boosting + identity link: expect convex", withLink(BOOSTING, "b", (q) => q, () => 1, () => 0), claim("convex"), "expect-failed"],
    ["boosting + half-logit link: expect convex", withLink(BOOSTING, "b", (q) => 0.5 * Math.log(q / (1 - q)), (q) => 0.5 / (q * (1 - q))), claim("convex"), null],
    ["log without link: expect convex", LOG_NATS, claim("convex"), "expect-undecided"],
    ["missing partial: expect proper", { name: "m", form: "partials", params: {}, threshold: 0.5 } as LossSpec, claim("proper"), "expect-undecided"],
  ] as const)("%s", (_n, spec, c, expected) => {
    const out = run(spec, [c]);
    if (expected === null) expect(out).toEqual([]);
    else {
      expect(out.map((f) => f.code)).toEqual([expected]);
      expect(out[0]!.clause).toBe("expect:0");
    }
  });

  it.each([
    // Agarwal 2014, Ex. 2: log loss has λ = 4.
    ["lambda >= 4 with λ = 4", claim("lambda-at-least", 2, 4), { lambda: 4 }, null],
    ["lambda >= 5 with λ = 4", claim("lambda-at-least", 2, 5), { lambda: 4 }, "expect-failed"],
    ["lambda >= 1 with λ unknown", claim("lambda-at-least", 2, 1), { lambda: null }, "expect-undecided"],
    ["exponent >= 0.5 with 0.5", claim("exponent-at-least", 2, 0.5), { exponent: 0.5 }, null],
    ["exponent >= 0.5 with 1/3", claim("exponent-at-least", 2, 0.5), { exponent: 1 / 3 }, "expect-failed"],
    ["convex supplied false", claim("convex", 2), { convex: false }, "expect-failed"],
  ] as const)("%s", (_n, c, extra, expected) => {
    const out = run(LOG_NATS, [c], extra);
    if (expected === null) expect(out).toEqual([]);
    else {
      expect(out.map((f) => f.code)).toEqual([expected]);
      expect(out[0]!.clause).toBe("expect:2");
    }
  });
});

describe("properties (fast-check, seeded; sources in each property)", () => {
  it("mixtures of log, Brier, boosting and ℓ_c are strictly proper with no error findings (a positive combination of proper losses is proper: RW10 Thm 6, w adds)", () => {
    fc.assert(
      fc.property(
        fc.double({ min: 0.01, max: 2, noNaN: true }),
        fc.double({ min: 0.01, max: 2, noNaN: true }),
        fc.double({ min: 0.01, max: 2, noNaN: true }),
        fc.double({ min: 0, max: 1, noNaN: true }),
        fc.double({ min: 0.05, max: 0.95, noNaN: true }),
        (a, b, g, d, c) => {
          const spec = partials(
            "mix",
            (q) => -a * Math.log(q) + b * (1 - q) ** 2 + g * Math.sqrt((1 - q) / q) + (q < c ? d * (1 - c) : 0),
            (q) => -a * Math.log(1 - q) + b * q * q + g * Math.sqrt(q / (1 - q)) + (q >= c ? d * c : 0),
          );
          const r = analyseProperness(familyOf(spec));
          return r.verdict === "strictly-proper" && errors(r).length === 0;
        },
      ),
      { seed: 1234, numRuns: 25 },
    );
  });

  it("Beta(a, b) weights q^{a−1}(1−q)^{b−1} with a, b ∈ [−0.8, 3] are strictly proper (RW10 Thm 6; integrable for a, b > −1, row L10, computed)", () => {
    fc.assert(
      fc.property(fc.double({ min: -0.8, max: 3, noNaN: true }), fc.double({ min: -0.8, max: 3, noNaN: true }), (a, b) => {
        const r = analyseProperness(familyOf(weight("beta", (q) => Math.pow(q, a - 1) * Math.pow(1 - q, b - 1))));
        return r.verdict === "strictly-proper" && r.findings.length === 0;
      }),
      { seed: 99, numRuns: 20 },
    );
  });

  it("perturbing only l1 of the Brier loss by ε·sin(kπq) makes it improper with a verified counterexample (computed: the stationarity ratios then differ, RW10 Thm 1)", () => {
    fc.assert(
      fc.property(fc.double({ min: 1e-3, max: 0.1, noNaN: true }), fc.integer({ min: 1, max: 8 }), (eps, k) => {
        const spec = partials("perturbed", (q) => (1 - q) ** 2 + eps * Math.sin(k * Math.PI * q), (q) => q * q);
        const r = analyseProperness(familyOf(spec));
        const ce = r.counterexample;
        return r.verdict === "improper" && ce !== null && r.fns!.risk(ce.eta, ce.q) < r.fns!.risk(ce.eta, ce.eta);
      }),
      { seed: 7, numRuns: 25 },
    );
  });
});

describe("weights that vanish fast at an endpoint", () => {
  // Beta(2, 5) weight w = q(1−q)^4: positive on (0, 1), so the loss is strictly proper (Reid & Williamson 2010,
  // Thm 6 and the text after it: strict iff w charges every open set), although l1 and l0 vary by ~1e-13 near q = 1.
  it("a closed-form weight positive near 1 is not mistaken for a flat Bayes risk", () => {
    const spec: LossSpec = { name: "beta25", form: "weight", params: {}, threshold: 0.2, weight: (q) => q * Math.pow(1 - q, 4) };
    const r = analyseProperness(familyOf(spec));
    expect(r.verdict).toBe("strictly-proper");
    expect(r.flatInterval).toBeNull();
  });
});
