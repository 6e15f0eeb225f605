/**
 * `compileLoss`: from a checked loss to the engine's `LossFamily` — the parameter vector (loss-local
 * parameters first, then the globals the loss uses, in declaration order), defaults and ranges,
 * instantiation with overrides, the threshold, claims, the canonical-link flag, and the compiled
 * derivatives of every clause.
 */
import { describe, expect, it } from "vitest";
import type { LossSpec } from "../../server/src/loss-model.js";
import { nearlyEqual } from "../../server/src/analysis/numeric/tolerance.js";
import { seededRandom } from "../../server/src/analysis/numeric/sampling.js";
import { sigmoid } from "../../server/src/semantics/builtins.js";
import { compileLoss, type CompiledLoss } from "../../server/src/semantics/family.js";
import { analyseSemantics } from "../../server/src/semantics/model.js";
import { printExpr } from "../../server/src/semantics/symbolic.js";
import { parse } from "../../server/src/syntax/parse.js";

const DOC = `param c = 0.3 in [0.01, 0.99]
param unused = 5
param k = 2
def s(z) = 1 / (1 + exp(-k * z))
loss focal(g = 2 in [0, 5], h = 0.5) {
  l1(q) = -(1 - q)^g * ln(q) * s(h)
  l0(q) = -q^g * ln(1 - q)
  link(q) = logit(q)
  inverse(v) = sigmoid(v)
  threshold = c
  expect strictly proper
  expect lambda >= 1 / 2
}
loss canon {
  l1(q) = (1 - q)^2
  l0(q) = q^2
  link = canonical
}
loss entropy {
  bayes(q) = -q * ln(q) - (1 - q) * ln(1 - q)
}
loss beta(a = 2, b = 3) {
  weight(q) = q^(a - 1) * (1 - q)^(b - 1)
}
loss logistic {
  margin(v) = softplus(-v)
}
`;

function compileAll(): Map<string, CompiledLoss> {
  const r = parse(DOC);
  expect(r.issues).toEqual([]);
  const model = analyseSemantics(r.ast);
  expect(model.issues).toEqual([]);
  const out = new Map<string, CompiledLoss>();
  for (const loss of model.losses) {
    const c = compileLoss(model, loss);
    if (!c) throw new Error(`${loss.name} did not compile`);
    out.set(loss.name, c);
  }
  return out;
}

const losses = compileAll();
const focal = losses.get("focal")!;

/** Same stencil and reasoning as in symbolic.test.ts: 5 points, h = 1e-5, tolerance 1e-6 (rounding ≈ 3e-11·|f|). */
function stencil(f: (x: number) => number, x: number): number {
  const h = 1e-5 * Math.max(1, Math.abs(x));
  return (-f(x + 2 * h) + 8 * f(x + h) - 8 * f(x - h) + f(x - 2 * h)) / (12 * h);
}

/** Checks that `df` is the derivative of `f` at seeded points of [lo, hi]. */
function expectDerivative(f: ((x: number) => number) | undefined, df: ((x: number) => number) | undefined, lo: number, hi: number): void {
  expect(f).toBeTypeOf("function");
  expect(df).toBeTypeOf("function");
  const rnd = seededRandom(31);
  for (let i = 0; i < 50; i++) {
    const x = lo + (hi - lo) * rnd();
    const fd = stencil(f!, x);
    expect(nearlyEqual(df!(x), fd, 1e-6, 1e-6 * Math.max(1, Math.abs(f!(x)))), `at ${x}: ${df!(x)} vs ${fd}`).toBe(true);
  }
}

describe("the parameter vector", () => {
  it("lists loss-local parameters, then the globals the loss uses, in declaration order", () => {
    expect(focal.paramNames).toEqual(["g", "h", "c", "k"]);
    expect(focal.family.params).toEqual([
      { name: "g", default: 2, lo: 0, hi: 5 },
      { name: "h", default: 0.5 },
      // `c` only enters `threshold`, so the engine need not sweep it for properness.
      { name: "c", default: 0.3, lo: 0.01, hi: 0.99, thresholdOnly: true },
      { name: "k", default: 2 },
    ]);
  });

  it("leaves out globals the loss does not use", () => {
    expect(losses.get("canon")!.paramNames).toEqual([]);
    expect(losses.get("beta")!.paramNames).toEqual(["a", "b"]);
  });
});

describe("instantiation", () => {
  it("uses the defaults when no value is given", () => {
    const spec = focal.family.instantiate({});
    expect(spec.params).toEqual({ g: 2, h: 0.5, c: 0.3, k: 2 });
    expect(spec.name).toBe("focal");
    expect(spec.form).toBe("partials");
    const q = 0.3;
    expect(nearlyEqual(spec.l1!(q), -((1 - q) ** 2) * Math.log(q) * sigmoid(2 * 0.5), 1e-14)).toBe(true);
    expect(nearlyEqual(spec.l0!(q), -(q ** 2) * Math.log(1 - q), 1e-14)).toBe(true);
  });

  it("applies overrides, ignores names the loss does not have, and does not leak between instances", () => {
    const spec = focal.family.instantiate({ g: 0, k: 1, unused: 9, nothing: 1 });
    expect(spec.params).toEqual({ g: 0, h: 0.5, c: 0.3, k: 1 });
    const q = 0.3;
    expect(nearlyEqual(spec.l1!(q), -Math.log(q) * sigmoid(0.5), 1e-14)).toBe(true);
    const again = focal.family.instantiate({});
    expect(nearlyEqual(again.l1!(q), -((1 - q) ** 2) * Math.log(q) * sigmoid(1), 1e-14)).toBe(true);
    // The first instance keeps its own values after the second was made.
    expect(nearlyEqual(spec.l1!(q), -Math.log(q) * sigmoid(0.5), 1e-14)).toBe(true);
  });

  it("takes the threshold from its parameter, and 1/2 when a loss has none", () => {
    expect(focal.family.instantiate({}).threshold).toBe(0.3);
    expect(focal.family.instantiate({ c: 0.7 }).threshold).toBe(0.7);
    // The notation's default decision threshold is 1/2 (test/reference/notation.md, "Definition forms": `threshold`, ½ when absent).
    expect(losses.get("canon")!.family.instantiate({}).threshold).toBe(0.5);
  });
});

describe("claims and flags", () => {
  it("carries the loss's claims in order", () => {
    expect(focal.family.claims).toEqual([
      { index: 0, kind: "strictly-proper" },
      { index: 1, kind: "lambda-at-least", value: 0.5 },
    ]);
    expect(losses.get("canon")!.family.claims).toEqual([]);
  });

  it("flags a canonical link and only then", () => {
    const canon = losses.get("canon")!.family.instantiate({});
    expect(canon.canonicalLink).toBe(true);
    expect(canon.link).toBeUndefined();
    expect(focal.family.instantiate({}).canonicalLink).toBeUndefined();
  });

  it("records each loss's primary form", () => {
    expect([...losses].map(([n, c]) => [n, c.family.form])).toEqual([
      ["focal", "partials"],
      ["canon", "partials"],
      ["entropy", "bayes"],
      ["beta", "weight"],
      ["logistic", "margin"],
    ]);
  });
});

describe("compiled clauses and derivatives", () => {
  const spec: LossSpec = focal.family.instantiate({ g: 1.5 });

  it("compiles first and second derivatives of the partial losses", () => {
    expectDerivative(spec.l1, spec.dl1, 0.02, 0.98);
    expectDerivative(spec.dl1, spec.d2l1, 0.02, 0.98);
    expectDerivative(spec.l0, spec.dl0, 0.02, 0.98);
    expectDerivative(spec.dl0, spec.d2l0, 0.02, 0.98);
  });

  it("compiles the link, its derivatives and the inverse", () => {
    expectDerivative(spec.link, spec.dlink, 0.02, 0.98);
    expectDerivative(spec.dlink, spec.d2link, 0.02, 0.98);
    const rnd = seededRandom(3);
    for (let i = 0; i < 20; i++) {
      const q = 0.01 + 0.98 * rnd();
      expect(nearlyEqual(spec.inverse!(spec.link!(q)), q, 1e-12)).toBe(true);
    }
  });

  it("compiles Bayes risk, weight and margin clauses with their derivatives", () => {
    const entropy = losses.get("entropy")!.family.instantiate({});
    expectDerivative(entropy.bayes, entropy.dbayes, 0.02, 0.98);
    expectDerivative(entropy.dbayes, entropy.d2bayes, 0.02, 0.98);
    const beta = losses.get("beta")!.family.instantiate({ a: 2.5 });
    expectDerivative(beta.weight, beta.dweight, 0.02, 0.98);
    const q = 0.4;
    expect(nearlyEqual(beta.weight!(q), q ** 1.5 * (1 - q) ** 2, 1e-14)).toBe(true);
    const logistic = losses.get("logistic")!.family.instantiate({});
    expectDerivative(logistic.margin, logistic.dmargin, -8, 8);
    expectDerivative(logistic.dmargin, logistic.d2margin, -8, 8);
  });

  it("keeps the expanded and differentiated forms for display, with helpers inlined", () => {
    const l1 = focal.forms.l1!;
    expect(l1.variable).toBe("q");
    expect(printExpr(l1.expr)).toBe("-(1 - q)^g * ln(q) * (1 / (1 + exp(-k * h)))");
    expect(l1.d1).not.toBeNull();
    expect(l1.d2).not.toBeNull();
    expect(focal.forms.threshold!.variable).toBe("");
    expect(focal.forms.threshold!.d1).toBeNull();
  });
});
