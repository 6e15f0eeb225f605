/**
 * Finite differences against analytic derivatives (sin' = cos, exp' = exp, (ln x)' = 1/x, polynomials by hand).
 * Error model (common practice): a central difference with step h has truncation ~h^k·|f^(k+1)| (k = 2 for
 * the three-point, k = 4 for the five-point stencils) and rounding ~EPS·|f|/h (first) or ~EPS·|f|/h²
 * (second differences); each row's tolerance is that budget with a safety factor, stated beside it.
 */
import { describe, expect, it } from "vitest";
import {
  centralDiff, DIFF_ENDPOINT_FRACTION, DIFF_STEP, diff2InUnit, diff2OnLine, diffInUnit, diffOnLine,
} from "../../../server/src/analysis/numeric/differences.js";

type Fn = (x: number) => number;
const { sin, cos, exp, log } = Math;

// [name, f, x, exact derivative, absolute tolerance relative to max(1, |exact|)]
type Row = [string, Fn, number, number, number];

describe("centralDiff (h = 1e-6·max(1, |x|): truncation ~1e-12, rounding ~1e-10)", () => {
  it.each<Row>([
    ["sin at 0", sin, 0, 1, 1e-8],
    ["sin at 1", sin, 1, cos(1), 1e-8],
    ["sin at 2.5", sin, 2.5, cos(2.5), 1e-8],
    ["exp at 0", exp, 0, 1, 1e-8],
    ["exp at −3", exp, -3, exp(-3), 1e-8],
    ["exp at 5", exp, 5, exp(5), 1e-8],
    ["x³ at −2", (x) => x ** 3, -2, 12, 1e-8],
  ])("%s", (_n, f, x, exact, tol) => {
    expect(Math.abs(centralDiff(f, x) - exact)).toBeLessThanOrEqual(tol * Math.max(1, Math.abs(exact)));
  });
});

describe("diffInUnit (five-point, stencil inside (0,1))", () => {
  it.each<Row>([
    ["q³ at ½ (exact for cubics up to rounding)", (q) => q ** 3, 0.5, 0.75, 1e-10],
    ["sin at 0.3", sin, 0.3, cos(0.3), 1e-10],
    ["exp at 0.9", exp, 0.9, exp(0.9), 1e-10],
    // Near an end the step is DIFF_ENDPOINT_FRACTION·d: for ln the relative truncation is (h/d)⁴·24/30 ≈ 1.3e-7.
    ["ln q at 1e-6 (→ 1e6)", log, 1e-6, 1e6, 1e-6],
    ["−ln(1−q) at 1 − 1e-6 (→ 1/(1−q))", (q) => -log(1 - q), 1 - 1e-6, 1 / (1 - (1 - 1e-6)), 1e-6],
    ["√q at 1e-4 (→ 50)", Math.sqrt, 1e-4, 50, 1e-6],
  ])("%s", (_n, f, x, exact, tol) => {
    expect(Math.abs(diffInUnit(f, x) - exact)).toBeLessThanOrEqual(tol * Math.max(1, Math.abs(exact)));
  });

  it.each([[0], [1], [-0.1], [1.5], [NaN]])("is NaN at or outside the endpoints (x = %s)", (x) => {
    expect(diffInUnit((q) => q, x)).toBeNaN();
    expect(diff2InUnit((q) => q, x)).toBeNaN();
  });

  it.each([[1e-10], [1e-3], [1 - 1e-10]])("never evaluates f outside (0,1) (x = %s)", (x) => {
    const inside: Fn = (q) => (q > 0 && q < 1 ? q * q : NaN);
    // Accuracy is limited by rounding ~EPS·|f|/h once the step h = DIFF_ENDPOINT_FRACTION·d gets tiny (d = 1e-10 near 1, where |f| ≈ 1).
    const h = Math.min(DIFF_STEP, DIFF_ENDPOINT_FRACTION * Math.min(x, 1 - x));
    expect(Math.abs(diffInUnit(inside, x) - 2 * x)).toBeLessThan(1e-8 + (10 * Number.EPSILON * x * x) / h);
    expect(Number.isFinite(diff2InUnit(inside, x))).toBe(true);
  });

  it("the endpoint step fraction keeps the stencil (reach 2h) inside: 2·DIFF_ENDPOINT_FRACTION < 1", () => {
    expect(2 * DIFF_ENDPOINT_FRACTION).toBeLessThan(1);
  });
});

describe("diff2InUnit (five-point second difference)", () => {
  it.each<Row>([
    ["q⁴ at ½ (→ 12q² = 3)", (q) => q ** 4, 0.5, 3, 1e-8],
    ["sin at 0.3 (→ −sin)", sin, 0.3, -sin(0.3), 1e-8],
    ["exp at 0.7", exp, 0.7, exp(0.7), 1e-8],
    // Near 0 the step shrinks with d, so rounding ~EPS·|f|/h² grows: at q = 1e-3, h = 2e-5, |f| ≈ 7 → ~1e-5 absolute on 1e6.
    ["ln q at 1e-3 (→ −1/q² = −1e6)", log, 1e-3, -1e6, 1e-6],
  ])("%s", (_n, f, x, exact, tol) => {
    expect(Math.abs(diff2InUnit(f, x) - exact)).toBeLessThanOrEqual(tol * Math.max(1, Math.abs(exact)));
  });
});

describe("differences on the real line (score scale)", () => {
  it.each<Row>([
    ["sin at 0", sin, 0, 1, 1e-8],
    ["sin at 10", sin, 10, cos(10), 1e-8],
    ["sin at −100 (step 1e-4: truncation ~2e-9)", sin, -100, cos(-100), 1e-8],
    ["exp at 2", exp, 2, exp(2), 1e-8],
    ["softplus ln(1+eˣ) at 3 (→ logistic)", (x) => log(1 + exp(x)), 3, 1 / (1 + exp(-3)), 1e-8],
  ])("diffOnLine: %s", (_n, f, x, exact, tol) => {
    expect(Math.abs(diffOnLine(f, x) - exact)).toBeLessThanOrEqual(tol * Math.max(1, Math.abs(exact)));
  });

  // Three-point second difference with h = 1e-4: rounding ~4·EPS·|f|/h² ≈ 1e-7·|f|, truncation h²·|f''''|/12 ≈ 1e-9.
  it.each<Row>([
    ["sin at 1 (→ −sin 1)", sin, 1, -sin(1), 1e-6],
    ["exp at 2 (→ e²)", exp, 2, exp(2), 1e-6],
    ["x³ at −3 (→ 6x = −18)", (x) => x ** 3, -3, -18, 1e-6],
    ["softplus at 0 (→ ¼)", (x) => log(1 + exp(x)), 0, 0.25, 1e-6],
  ])("diff2OnLine: %s", (_n, f, x, exact, tol) => {
    expect(Math.abs(diff2OnLine(f, x) - exact)).toBeLessThanOrEqual(tol * Math.max(1, Math.abs(exact)));
  });
});
