/**
 * Benchmark of the curvature analysis: δ, δ**, its inverse and all bounds for one loss (the whole
 * `analyseCurvature` call plus one inverse per route), median over repeated runs.
 * Plain TypeScript with no I/O: a runner (e.g. a bundled script or a test) prints the figures.
 */
import type { LossFunctions } from "../server/src/loss-model.js";
import { analyseCurvature, cachedCurvatureModels } from "../server/src/analysis/curvature.js";
import { modulusRouteBound } from "../server/src/analysis/bounds.js";

const xlnx = (x: number) => (x <= 0 ? 0 : x * Math.log(x));

/** LossFunctions from a Bayes risk, its derivative and weight (Savage representation, Bao 2023 Thm 1). */
function fromBayes(H: (q: number) => number, dH: (q: number) => number, w: ((q: number) => number) | null, margin: ((v: number) => number) | null = null): LossFunctions {
  const l1 = (q: number) => H(q) + (1 - q) * dH(q);
  const l0 = (q: number) => H(q) - q * dH(q);
  return {
    form: margin ? "margin" : "bayes",
    threshold: 0.5,
    l1,
    l0,
    dl1: (q) => (w ? -(1 - q) * w(q) : NaN),
    dl0: (q) => (w ? q * w(q) : NaN),
    risk: (eta, q) => eta * l1(q) + (1 - eta) * l0(q),
    bayes: H,
    weight: w,
    link: null,
    dlink: null,
    inverseLink: null,
    margin,
    notes: [],
  };
}

function cases(): { name: string; make: () => LossFunctions }[] {
  return [
    { name: "log loss", make: () => fromBayes((q) => -xlnx(q) - xlnx(1 - q), (q) => Math.log((1 - q) / q), (q) => 1 / (q * (1 - q))) },
    { name: "Beta(2,2)", make: () => fromBayes((q) => (q - 2 * q ** 3 + q ** 4) / 12, (q) => (1 - 6 * q * q + 4 * q ** 3) / 12, (q) => q * (1 - q)) },
    {
      name: "pseudo-spherical α=3 (numeric w)",
      make: () => {
        const a = 3;
        return fromBayes(
          (q) => 1 - (q ** a + (1 - q) ** a) ** (1 / a),
          (q) => -((q ** a + (1 - q) ** a) ** (1 / a - 1)) * (q ** (a - 1) - (1 - q) ** (a - 1)),
          null,
        );
      },
    },
    { name: "0-1 loss", make: () => fromBayes((q) => Math.min(q, 1 - q), (q) => (q < 0.5 ? 1 : -1), null) },
    {
      name: "logistic margin (with ψ-transform)",
      make: () =>
        fromBayes(
          (q) => -xlnx(q) - xlnx(1 - q),
          (q) => Math.log((1 - q) / q),
          (q) => 1 / (q * (1 - q)),
          (v) => (v > 0 ? Math.log1p(Math.exp(-v)) : -v + Math.log1p(Math.exp(v))),
        ),
    },
  ];
}

function median(xs: number[]): number {
  const s = [...xs].sort((a, b) => a - b);
  const m = s.length >> 1;
  return s.length % 2 ? s[m]! : 0.5 * (s[m - 1]! + s[m]!);
}

/**
 * Runs each case `runs` times (after one warm-up) on a fresh LossFunctions object, so no cache is reused
 * across runs, and returns the median wall time per case in milliseconds.
 */
export async function benchCurvature(runs = 15): Promise<{ name: string; medianMs: number }[]> {
  const out: { name: string; medianMs: number }[] = [];
  for (const c of cases()) {
    const times: number[] = [];
    for (let i = 0; i <= runs; i++) {
      const fns = c.make();
      const t0 = performance.now();
      analyseCurvature(fns);
      const models = cachedCurvatureModels(fns);
      if (models?.modulus) modulusRouteBound(models.modulus, 0.01);
      if (models?.direct) models.direct.inverse(0.01);
      if (models?.psi) models.psi.inverse(0.01);
      const t1 = performance.now();
      if (i > 0) times.push(t1 - t0);
    }
    out.push({ name: c.name, medianMs: median(times) });
    // Yield between cases so a caller's event loop stays responsive.
    await Promise.resolve();
  }
  return out;
}
