/**
 * Small jumps between grid points, at every grid size the settings allow and at several positions.
 * Brier's partial losses (Brier 1950, "Verification of Forecasts Expressed in Terms of Probability",
 * Monthly Weather Review 78) with l0 lowered by 1e-5 for q > x0 are improper (computed, by hand): for η
 * just below x0, predicting q just above x0 changes the conditional risk by (q − η)² − (1 − η)·1e-5 < 0.
 * The jump probe must find the jump whatever the grid, because the grid is a setting
 * (propriety.analysis.gridResolution) and a verdict must not depend on where its points fall.
 */
import { describe, expect, it } from "vitest";
import { analyseProperness } from "../../server/src/analysis/properness.js";
import { familyOf, partials } from "./standard-losses.js";

const brier1 = (q: number) => (1 - q) ** 2;
const brier0 = (q: number) => q * q;
const JUMP = 1e-5;

const rows: [number, number][] = [];
for (const resolution of [11, 51, 101, 199, 200, 201, 202, 401, 1001]) for (const at of [0.0311, 0.30123, 0.5001, 0.7777, 0.9689]) rows.push([resolution, at]);

describe("a downward jump of 1e-5 in Brier's l0", () => {
  it.each(rows)("grid %i, jump at %f: improper, with a re-evaluated counterexample straddling the jump", (resolution, at) => {
    const spec = partials("tiny-jump", brier1, (q) => brier0(q) - (q > at ? JUMP : 0));
    const r = analyseProperness(familyOf(spec), { resolution });
    expect(r.verdict).toBe("improper");
    const ce = r.counterexample!;
    expect(ce.riskAtQ).toBeLessThan(ce.riskAtEta);
    expect(ce.eta).toBeLessThanOrEqual(at);
    expect(ce.q).toBeGreaterThan(at);
  });

  it("and the same loss without the jump is strictly proper at every grid (the probe raises no false alarm)", () => {
    for (const resolution of [11, 201, 1001]) expect(analyseProperness(familyOf(partials("brier", brier1, brier0)), { resolution }).verdict).toBe("strictly-proper");
  });
});
