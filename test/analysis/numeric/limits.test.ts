/**
 * Endpoint values as limits from inside (0,1) and the clamped, cached, exception-free `boundedUnitFn`.
 * Limits by hand / common practice: x·ln x → 0 as x → 0⁺; sin x / x → 1; (x − 1)/ln x → 1 as x → 1
 * (L'Hôpital); (1 − x)·ln(1 − x) → 0 as x → 1⁻.
 */
import { describe, expect, it } from "vitest";
import { boundedUnitFn, endpointLimit } from "../../../server/src/analysis/numeric/limits.js";
import { seededRandom } from "../../../server/src/analysis/numeric/sampling.js";

type Fn = (x: number) => number;

describe("endpointLimit", () => {
  it.each<[string, Fn, 0 | 1, number, number]>([
    // [name, f, end, limit, absolute tolerance]
    ["x² + 3 at 0 (finite there: the value itself)", (x) => x * x + 3, 0, 3, 0],
    ["x·ln x at 0 (NaN at 0, limit 0)", (x) => x * Math.log(x), 0, 0, 1e-290],
    ["sin x / x at 0 (0/0, limit 1)", (x) => Math.sin(x) / x, 0, 1, 1e-15],
    ["(x − 1)/ln x at 1 (0/0, limit 1)", (x) => (x - 1) / Math.log(x), 1, 1, 1e-15],
    ["(1 − x)·ln(1 − x) at 1 (limit 0)", (x) => (1 - x) * Math.log(1 - x), 1, 0, 1e-14],
    ["throws at 0, 2 + x elsewhere (limit 2)", (x) => { if (x === 0) throw new Error("pole"); return 2 + x; }, 0, 2, 1e-15],
  ])("%s", (_n, f, at, limit, tol) => {
    expect(Math.abs(endpointLimit(f, at) - limit)).toBeLessThanOrEqual(tol);
  });

  it.each<[string, Fn]>([
    ["NaN everywhere", () => NaN],
    ["always throws", () => { throw new Error("x"); }],
  ])("no finite probe → NaN: %s", (_n, f) => {
    expect(endpointLimit(f, 0)).toBeNaN();
    expect(endpointLimit(f, 1)).toBeNaN();
  });
});

describe("boundedUnitFn", () => {
  it("clamps arguments into [0, 1] and uses the endpoint limits there", () => {
    const g = boundedUnitFn((x) => Math.sin(x) / x + (1 - x) * Math.log(1 - x));
    // At 0: sin x/x → 1 plus 1·ln 1 = 0; at 1: sin 1 plus (1−x)ln(1−x) → 0.
    for (const x of [-5, -1e-300, 0]) expect(Math.abs(g(x) - 1)).toBeLessThan(1e-15);
    for (const x of [1, 1 + 1e-12, 7]) expect(Math.abs(g(x) - Math.sin(1))).toBeLessThan(1e-14);
  });

  it("turns exceptions into NaN", () => {
    const g = boundedUnitFn((x) => { if (x > 0.5) throw new Error("no"); return x; });
    expect(g(0.75)).toBeNaN();
    expect(g(0.25)).toBe(0.25);
  });

  it("the cache never returns another argument's value: 20000 seeded points (slot collisions included) equal f exactly", () => {
    const f: Fn = (x) => Math.exp(x) * Math.cos(7 * x);
    const g = boundedUnitFn(f);
    const r = seededRandom(11);
    const xs = Array.from({ length: 20000 }, () => r());
    for (const x of [...xs, ...xs.slice().reverse()]) expect(g(x)).toBe(f(x));
  });

  it("a repeated argument is evaluated once", () => {
    let calls = 0;
    const g = boundedUnitFn((x) => (calls++, x * x));
    const before = calls; // the endpoint limits are probed once on construction
    g(0.3);
    g(0.3);
    g(0.3);
    expect(calls - before).toBe(1);
  });
});
