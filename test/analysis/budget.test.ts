/**
 * Budgets: every search of the engine is bounded in steps, so its verdicts and figures are a function of
 * the input alone; the wall-clock deadline is a last resort read from an injected clock, and a stage it
 * stops says so (an "analysis-unknown" finding with reason "time-budget", verdict "unknown" when the
 * properness search itself was cut). These tests drive the clock by hand: a frozen clock never reaches
 * the deadline, a clock that jumps past it after N readings reaches it at a known point. Determinism and
 * "a deadline is never silent" are this project's requirements (common practice); the losses are rows of
 * test/reference/proper-losses.md with their published verdicts in standard-losses.ts.
 */
import { describe, expect, it } from "vitest";
import { analyseFamily, type LossAnalysis } from "../../server/src/analysis/analyse.js";
import { analyseProperness } from "../../server/src/analysis/properness.js";
import { analyseCurvature } from "../../server/src/analysis/curvature.js";
import type { Finding, LossFamily } from "../../server/src/loss-model.js";
import { fromBayes, logNats } from "./curvature-table.js";
import { bayes, costWeighted, familyOf, focal, focalFamily, LOG_NATS, MARGIN_LOGISTIC, partials, STANDARD_LOSSES, weight } from "./standard-losses.js";

/** A clock that reads 0 for its first `reads` readings and far past any deadline afterwards. */
function jumpsAfter(reads: number): () => number {
  let n = 0;
  return () => (n++ < reads ? 0 : 1e15);
}

/** A frozen clock that counts how often it is read. */
function countingFrozen(): { clock: () => number; reads: () => number } {
  let n = 0;
  return { clock: () => (n++, 0), reads: () => n };
}

/** A clock that moves, but so slowly (1 ns per reading) that no deadline of the engine is reached. */
function crawling(): () => number {
  let t = 0;
  return () => (t += 1e-6);
}

/** The analysis as plain data: closures and the derived model dropped, numbers kept to the last bit. */
function plain(a: LossAnalysis): unknown {
  return JSON.parse(JSON.stringify({ ...a, fns: undefined, curvature: a.curvature ? { ...a.curvature } : null }, (_k, v) => (typeof v === "number" && !Number.isFinite(v) ? String(v) : v)));
}

function budgetFindings(findings: Finding[]): Finding[] {
  return findings.filter((f) => f.code === "analysis-unknown" && f.reason === "time-budget");
}

/** Losses of every definition form, with ranges, flat pieces and impropriety among them. */
const CASES: { id: string; family: LossFamily; verdict: LossAnalysis["verdict"] }[] = [
  { id: "log loss (row L1; Agarwal 2014, Ex. 2)", family: familyOf(LOG_NATS), verdict: "strictly-proper" },
  { id: "cost-weighted c = 0.2 (row L12; Reid & Williamson 2010, Table 1)", family: familyOf(costWeighted(0.2)), verdict: "proper" },
  { id: "focal γ = 2 (row L17; Charoenphakdee et al. 2021)", family: familyOf(focal(2)), verdict: "improper" },
  { id: "focal family g ∈ [0, 5] at g = 0 (log loss; row L17)", family: focalFamily([], 0), verdict: "strictly-proper" },
  { id: "Beta(2,2) weight (row L10c; Reid & Williamson 2010, Thm 6)", family: familyOf(weight("beta-2-2", (q) => q * (1 - q))), verdict: "strictly-proper" },
  {
    id: "entropy as a Bayes risk without H' (row L1)",
    family: familyOf(bayes("entropy", (q) => -q * Math.log(q) - (1 - q) * Math.log(1 - q))),
    verdict: "strictly-proper",
  },
  { id: "logistic margin (row P2; Reid & Williamson 2010, Cor. 14)", family: familyOf(MARGIN_LOGISTIC), verdict: "strictly-proper" },
];

describe("the deadline passed: unknown (time budget), decided by an injected clock", () => {
  it("a clock past the deadline at its first check stops the properness search: verdict unknown, reason time-budget", () => {
    const r = analyseProperness(familyOf(LOG_NATS), { clock: jumpsAfter(1) });
    expect(r.verdict).toBe("unknown");
    expect(r.counterexample).toBeNull();
    const budget = budgetFindings(r.findings);
    expect(budget.length).toBe(1);
    expect(budget[0]!.clause).toBe("loss");
  });

  it("analyseFamily passes the clock down: unknown, no curvature, the time-budget finding among its findings", () => {
    const a = analyseFamily(familyOf(LOG_NATS), { clock: jumpsAfter(1) });
    expect(a.verdict).toBe("unknown");
    expect(a.lambda).toBeNull();
    expect(a.curvature ?? null).toBeNull();
    expect(budgetFindings(a.findings).length).toBeGreaterThan(0);
  });

  it("the curvature stage reads the same clock: past the deadline, the bound models are skipped with time-budget findings", () => {
    const res = analyseCurvature(fromBayes(logNats), { clock: jumpsAfter(1) });
    expect(res.modulus).toBeNull();
    expect(res.inverseTable.every((row) => row.viaModulus === null && row.direct === null)).toBe(true);
    // The modulus and the direct bound are each skipped, each with its own finding.
    expect(budgetFindings(res.findings).length).toBe(2);
    // λ is computed before the bound models and does not depend on the clock (Agarwal 2014, Ex. 2: λ = 4).
    expect(res.lambda).toBeCloseTo(4, 9);
  });

  it("a deadline passed during the range sweep: the verdict at the defaults stands, the sweep says it is partial", () => {
    let late = false;
    const base = focalFamily([], 0);
    // The clock jumps as soon as the sweep instantiates a value other than the default g = 0.
    const family: LossFamily = { ...base, instantiate: (v) => ((late ||= v["g"] !== 0), base.instantiate(v)) };
    const r = analyseProperness(family, { clock: () => (late ? 1e15 : 0) });
    expect(r.verdict).toBe("strictly-proper");
    expect(r.paramReport).toContain("partly sampled");
    const budget = budgetFindings(r.findings);
    expect(budget.length).toBe(1);
    expect(budget[0]!.clause).toBe("param:g");
  });

  it("a real slow loss with a 5 ms budget (real clock) ends unknown with reason time-budget", () => {
    const slow = (f: (q: number) => number) => (q: number) => {
      const t = performance.now();
      while (performance.now() - t < 0.02) {
        // Busy-wait to make every evaluation slow.
      }
      return f(q);
    };
    const r = analyseProperness(familyOf(partials("slow", slow((q) => (1 - q) ** 2), slow((q) => q * q))), { deadlineMs: 5 });
    expect(r.verdict).toBe("unknown");
    expect(budgetFindings(r.findings).length).toBe(1);
  });
});

describe("no deadline reached: the result does not depend on the clock", () => {
  for (const c of CASES) {
    it(`${c.id}: a crawling clock and a frozen clock give the same analysis, with the published verdict`, () => {
      const frozen = analyseFamily(c.family, { clock: () => 0 });
      const slow = analyseFamily(c.family, { clock: crawling() });
      expect(frozen.verdict).toBe(c.verdict);
      expect(budgetFindings(frozen.findings)).toEqual([]);
      expect(plain(slow)).toEqual(plain(frozen));
    });
  }

  it("the standard losses (Reid & Williamson 2010, Agarwal 2014, Bao 2023; see standard-losses.ts) get their published verdicts with a frozen clock", () => {
    for (const row of STANDARD_LOSSES) expect(analyseProperness(familyOf(row.spec), { clock: () => 0 }).verdict, row.id).toBe(row.verdict);
  });
});

describe("a deadline is never silent", () => {
  // For each clock reading N at which the deadline may pass, the result is either exactly the one of a
  // frozen clock or carries a time-budget finding: no search is cut short without saying so.
  for (const c of [CASES[0]!, CASES[1]!, CASES[2]!, CASES[3]!]) {
    it(`${c.id}: for every tested reading N, the same result or a time-budget finding`, () => {
      const counter = countingFrozen();
      const reference = plain(analyseFamily(c.family, { clock: counter.clock }));
      const total = counter.reads();
      // The clock is read a bounded number of times (the searches are bounded in steps).
      expect(total).toBeGreaterThan(1);
      const ns = [...new Set([1, 2, 3, Math.floor(total / 3), Math.floor(total / 2), total - 1, total, total + 1])].filter((n) => n >= 1);
      for (const n of ns) {
        const a = analyseFamily(c.family, { clock: jumpsAfter(n) });
        if (budgetFindings(a.findings).length === 0) expect(plain(a), `reading ${n} of ${total}`).toEqual(reference);
        if (n >= total) expect(plain(a), `reading ${n} of ${total}`).toEqual(reference);
      }
    });
  }
});

describe("repeated runs", () => {
  it("the same input analysed twice (real clock, a budget never reached) gives identical results", () => {
    for (const c of CASES) {
      const a = plain(analyseFamily(c.family, { deadlineMs: 1e9 }));
      const b = plain(analyseFamily(c.family, { deadlineMs: 1e9 }));
      expect(b, c.id).toEqual(a);
    }
  });

  it("the clock is read the same number of times on every run (the step counts do not depend on time)", () => {
    const one = countingFrozen();
    const two = countingFrozen();
    analyseFamily(focalFamily([], 0), { clock: one.clock });
    analyseFamily(focalFamily([], 0), { clock: two.clock });
    expect(two.reads()).toBe(one.reads());
  });
});
