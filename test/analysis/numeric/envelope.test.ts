/**
 * Lower convex hulls of point sets and the lower convex envelope (biconjugate) of sampled functions.
 * Sources: the lower half of Andrew's monotone chain (Andrew 1979, "Another efficient algorithm for convex
 * hulls in two dimensions", Information Processing Letters 9(5), 216–219; from memory); the expected hulls
 * below are worked out by hand. Envelopes in closed form (by hand, common practice): a convex function is
 * its own envelope; a concave one's envelope on [a, b] is the chord; the double well (x² − 1)² has envelope
 * 0 on [−1, 1] (the tangent y = 0 touches it at ±1, where g' = 0) and g outside, where g'' = 12x² − 4 > 0.
 */
import { describe, expect, it } from "vitest";
import { LowerEnvelope, lowerHullIndices } from "../../../server/src/analysis/numeric/envelope.js";
import { linspace } from "../../../server/src/analysis/numeric/sampling.js";

type Fn = (x: number) => number;

describe("lowerHullIndices", () => {
  const halves = [-2, -1.5, -1, -0.5, 0, 0.5, 1, 1.5, 2];
  it.each<[string, number[], number[], number[]]>([
    // [name, xs, ys, expected hull indices]
    ["points on the parabola y = x² (strictly convex: all kept)", [-2, -1, 0, 1, 2], [4, 1, 0, 1, 4], [0, 1, 2, 3, 4]],
    ["parabola points with interior points 1 above it (only the parabola points kept)", halves, halves.map((x) => x * x + (Number.isInteger(x) ? 0 : 1)), [0, 2, 4, 6, 8]],
    ["a middle point above the chord is dropped", [0, 1, 2], [0, 2, 0], [0, 2]],
    ["a middle point below the chord is kept", [0, 1, 2], [0, -1, 0], [0, 1, 2]],
    ["collinear points keep only the ends", [0, 1, 2, 3], [0, 1, 2, 3], [0, 3]],
    ["a W shape keeps both wells and both ends", [0, 1, 2, 3, 4], [1, 0, 3, 0, 1], [0, 1, 3, 4]],
    ["non-finite values are skipped", [0, 1, 2, 3], [0, NaN, Infinity, 1], [0, 3]],
    ["a single point", [5], [2], [0]],
    ["no points", [], [], []],
  ])("%s", (_n, xs, ys, expected) => {
    expect(lowerHullIndices(xs, ys)).toEqual(expected);
  });
});

describe("LowerEnvelope", () => {
  it("double well (x² − 1)² on an off-grid [−2.1, 1.93]: 0 on [−1, 1], g outside, to 4s² away from the contact cells", () => {
    const g: Fn = (x) => (x * x - 1) ** 2;
    const n = 80;
    const h = (1.93 + 2.1) / n;
    const xs = linspace(-2.1, 1.93, n);
    const env = new LowerEnvelope(xs, xs.map(g), g);
    // Contact points are refined on a sub-grid of step s = h/8; near ±1, g ≈ 4(x ∓ 1)², so the bridge's ends sit at most 4s² above 0.
    const s = h / 8;
    // In the sample cell that contains a contact point the envelope is taken as g itself (the cell is a hull
    // edge between neighbouring samples), so there the error is bounded only by g one step from the contact.
    const cellBound = g(1 + h);
    for (const x of linspace(-2.1, 1.93, 997)) {
      const exact = Math.abs(x) <= 1 ? 0 : g(x);
      const err = Math.abs(env.value(x) - exact);
      if (Math.abs(Math.abs(x) - 1) > h) expect(err).toBeLessThanOrEqual(4 * s * s);
      // Observed there: 2.3e-4 at x ≈ −0.9925, a grid-scale error (cellBound ≈ 1.1e-2).
      else expect(err).toBeLessThanOrEqual(cellBound);
    }
  });

  it.each<[string, Fn, [number, number][]]>([
    // [name, g on [0, 1], (x, envelope(x)) pairs]
    ["√x (concave): the chord y = x", Math.sqrt, [[0, 0], [0.3, 0.3], [0.77, 0.77], [1, 1]]],
    ["x² (convex): itself", (x) => x * x, [[0, 0], [0.3, 0.09], [0.77, 0.77 ** 2], [1, 1]]],
    ["sin(πx) (concave): the chord y = 0", (x) => Math.sin(Math.PI * x), [[0.25, 0], [0.5, 0], [0.9, 0]]],
    ["2·max(0, x − ½) (convex hinge): itself", (x) => 2 * Math.max(0, x - 0.5), [[0.2, 0], [0.5, 0], [0.75, 0.5], [1, 1]]],
  ])("%s", (_n, g, points) => {
    const xs = linspace(0, 1, 50);
    const env = new LowerEnvelope(xs, xs.map(g), g);
    for (const [x, y] of points) expect(Math.abs(env.value(x) - y)).toBeLessThan(1e-12);
  });

  it.each<[string, Fn, number, number]>([
    // [name, non-decreasing g on [0, 1], r, sup{x : g**(x) ≤ r}]
    ["√x: chord y = x, so the inverse is r", Math.sqrt, 0.49, 0.49],
    ["x²: the inverse is √r", (x) => x * x, 0.49, 0.7],
    ["hinge 2·max(0, x − ½): ½ + r/2", (x) => 2 * Math.max(0, x - 0.5), 0.4, 0.7],
    ["hinge at r = 0: the right end of the flat stretch, ½", (x) => 2 * Math.max(0, x - 0.5), 0, 0.5],
    ["r above the maximum: hi", (x) => x * x, 2, 1],
    ["r below the minimum: lo", (x) => x * x, -1, 0],
  ])("inverse: %s (r = %s → %s)", (_n, g, r, expected) => {
    const xs = linspace(0, 1, 50);
    const env = new LowerEnvelope(xs, xs.map(g), g);
    expect(Math.abs(env.inverse(r) - expected)).toBeLessThan(1e-10);
  });

  it("approxValue is the chord of the samples: for x² with step 0.01, at 0.005 it is 0.01·0.005 = 5e-5 (exact value 2.5e-5)", () => {
    const g: Fn = (x) => x * x;
    const xs = linspace(0, 1, 100);
    const env = new LowerEnvelope(xs, xs.map(g), g);
    expect(Math.abs(env.approxValue(0.005) - 5e-5)).toBeLessThan(1e-18);
    expect(Math.abs(env.value(0.005) - 2.5e-5)).toBeLessThan(1e-18);
  });
});
