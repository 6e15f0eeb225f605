/**
 * Symbolic differentiation checked three ways: against a 5-point central finite-difference stencil at
 * seeded random points (every built-in rule, products, quotients, powers, piecewise forms, helpers),
 * against mathjs's `derivative` where mathjs has the rule, and by printing: `printExpr` output is
 * pinned for a few readable derivatives and always re-parses to the same function.
 */
import { compile as mathCompile, derivative as mathDerivative } from "mathjs";
import { describe, expect, it } from "vitest";
import { nearlyEqual } from "../../server/src/analysis/numeric/tolerance.js";
import { seededRandom } from "../../server/src/analysis/numeric/sampling.js";
import { BUILTINS } from "../../server/src/semantics/builtins.js";
import { compileExpr, type CompileScope } from "../../server/src/semantics/compile.js";
import { helperBodies } from "../../server/src/semantics/family.js";
import { analyseSemantics } from "../../server/src/semantics/model.js";
import { differentiate, inlineDefs, NotDifferentiable, printExpr, simplify } from "../../server/src/semantics/symbolic.js";
import type { Expr } from "../../server/src/syntax/ast.js";
import { parse } from "../../server/src/syntax/parse.js";

const POINTS = 200;

/** Parses one expression of the notation (as the body of a helper `t(x, a)`); fails on any parse issue. */
function parseExpr(src: string): Expr {
  const r = parse(`def t(x, q, v, a, g) = ${src}`);
  expect(r.issues, src).toEqual([]);
  const item = r.ast.items[0];
  if (!item || item.kind !== "def" || !item.body) throw new Error(`no expression in ${src}`);
  return item.body;
}

const SCOPE: CompileScope = { variable: "x", paramSlots: new Map([["a", 0]]), defs: new Map() };

function compileIn(e: Expr, variable = "x"): (x: number, a: number) => number {
  const f = compileExpr(e, { ...SCOPE, variable });
  return (x, a) => f(x, Float64Array.of(a));
}

/**
 * Step and tolerance of the finite-difference check. The 5-point stencil
 * (−f(x+2h) + 8f(x+h) − 8f(x−h) + f(x−2h)) / 12h has truncation error h⁴|f⁽⁵⁾|/30 (≈ 3e-22·|f⁽⁵⁾| at
 * h = 1e-5) and rounding error ≈ 1.5·ε·|f|/h ≈ 3e-11·|f|. A relative tolerance of 1e-6, with an absolute
 * floor of 1e-6·max(1, |f|) for that rounding, is orders of magnitude above both, while a wrong rule (a
 * lost factor or sign) is off by O(1).
 */
const FD_STEP = 1e-5;
const FD_TOL = 1e-6;

function stencil(f: (x: number) => number, x: number): number {
  const h = FD_STEP * Math.max(1, Math.abs(x));
  return (-f(x + 2 * h) + 8 * f(x + h) - 8 * f(x - h) + f(x - 2 * h)) / (12 * h);
}

interface Row {
  /** The function of `x` (with parameter `a`) in the notation. */
  expr: string;
  /** Where to sample; the ends stay clear of singularities by more than the stencil's reach. */
  x: [number, number];
  a?: [number, number];
  /** Points where the function has a kink or jump: samples within 1e-3 of one are skipped. */
  kinks?: number[];
  /** The same function for mathjs's `derivative`, when mathjs has every rule it needs. */
  mathjs?: string;
}

const ROWS: Row[] = [
  // One row per built-in rule.
  { expr: "ln(x)", x: [0.01, 20], mathjs: "log(x)" },
  { expr: "log(1 + x^2)", x: [-5, 5], mathjs: "log(1 + x^2)" },
  { expr: "log2(x)", x: [0.01, 20] },
  { expr: "log10(x)", x: [0.01, 20], mathjs: "log10(x)" },
  { expr: "exp(2 * x)", x: [-5, 5], mathjs: "exp(2 * x)" },
  { expr: "sqrt(x)", x: [0.01, 20], mathjs: "sqrt(x)" },
  { expr: "abs(x - 0.5)", x: [-2, 2], kinks: [0.5], mathjs: "abs(x - 0.5)" },
  { expr: "min(x, 1 - x)", x: [0, 1], kinks: [0.5] },
  { expr: "max(x^2, a)", x: [0, 2], a: [0.25, 0.25], kinks: [0.5] },
  { expr: "pow(x, 3)", x: [-3, 3], mathjs: "pow(x, 3)" },
  { expr: "pow(x, x)", x: [0.05, 3], mathjs: "pow(x, x)" },
  { expr: "sin(x)", x: [-7, 7], mathjs: "sin(x)" },
  { expr: "cos(x^2)", x: [-3, 3], mathjs: "cos(x^2)" },
  { expr: "tan(x)", x: [-1.4, 1.4], mathjs: "tan(x)" },
  { expr: "asin(x)", x: [-0.95, 0.95], mathjs: "asin(x)" },
  { expr: "acos(x)", x: [-0.95, 0.95], mathjs: "acos(x)" },
  { expr: "atan(3 * x)", x: [-5, 5], mathjs: "atan(3 * x)" },
  { expr: "sinh(x)", x: [-5, 5], mathjs: "sinh(x)" },
  { expr: "cosh(x)", x: [-5, 5], mathjs: "cosh(x)" },
  { expr: "tanh(x)", x: [-5, 5], mathjs: "tanh(x)" },
  { expr: "log1p(x)", x: [-0.9, 10] },
  { expr: "expm1(x)", x: [-5, 5] },
  { expr: "sigmoid(x)", x: [-10, 10] },
  { expr: "logit(x)", x: [0.01, 0.99] },
  { expr: "softplus(-x)", x: [-10, 10] },
  { expr: "erf(x)", x: [-3, 3] },
  { expr: "normcdf(x)", x: [-4, 4] },
  { expr: "probit(x)", x: [0.02, 0.98] },
  // Products, quotients and powers with constant and variable exponents.
  { expr: "x * (1 - x)", x: [-2, 2], mathjs: "x * (1 - x)" },
  { expr: "(1 - x) / x", x: [0.05, 3], mathjs: "(1 - x) / x" },
  { expr: "1 / (x * (1 - x))", x: [0.05, 0.95], mathjs: "1 / (x * (1 - x))" },
  { expr: "x^-2", x: [0.1, 3], mathjs: "x^(-2)" },
  { expr: "x^0.5 + x^2.5", x: [0.01, 4], mathjs: "x^0.5 + x^2.5" },
  { expr: "x^a", x: [0.05, 3], a: [-2, 3], mathjs: "x^a" },
  { expr: "a^x", x: [-3, 3], a: [0.2, 4], mathjs: "a^x" },
  { expr: "2^x", x: [-3, 3], mathjs: "2^x" },
  { expr: "(1 + x)^(2 * x)", x: [-0.5, 3], mathjs: "(1 + x)^(2 * x)" },
  { expr: "x^2 / 2 - x / 3", x: [-3, 3], mathjs: "x^2 / 2 - x / 3" },
  { expr: "-(1 - x)^a * ln(x)", x: [0.01, 0.99], a: [0, 5], mathjs: "-((1 - x)^a) * log(x)" },
  { expr: "-x * ln(x) - (1 - x) * ln(1 - x)", x: [0.01, 0.99], mathjs: "-x * log(x) - (1 - x) * log(1 - x)" },
  { expr: "x^(a - 1) * (1 - x)^(a + 1)", x: [0.05, 0.95], a: [0.5, 3], mathjs: "x^(a - 1) * (1 - x)^(a + 1)" },
  { expr: "exp(-x^2 / 2) / sqrt(2 * pi)", x: [-4, 4], mathjs: "exp(-(x^2) / 2) / sqrt(2 * pi)" },
  { expr: "ln(1 + exp(-3 * x))", x: [-5, 5], mathjs: "log(1 + exp(-3 * x))" },
  { expr: "e^x - x", x: [-3, 3], mathjs: "e^x - x" },
  { expr: "-x^3", x: [-3, 3], mathjs: "-(x^3)" },
  // Piecewise forms, sampled away from their kinks.
  { expr: "if x < 0.5 then x^2 else 1 - x", x: [0, 1], kinks: [0.5] },
  { expr: "if x < 0.3 or x > 0.7 then sin(x) else if not (x < 0.5) then x^3 else -x", x: [0, 1], kinks: [0.3, 0.5, 0.7] },
  { expr: "max(1 - x, 0)^2", x: [-2, 3], kinks: [1] },
  { expr: "abs(sin(3 * x))", x: [0.05, 1], kinks: [Math.PI / 3] },
];

describe("derivatives agree with finite differences", () => {
  for (const row of ROWS) {
    it(`d/dx ${row.expr}`, () => {
      const e = parseExpr(row.expr);
      const d1 = differentiate(e, "x");
      const d2 = differentiate(d1, "x");
      const f = compileIn(e);
      const f1 = compileIn(d1);
      const f2 = compileIn(d2);
      const rnd = seededRandom(0xd1ff ^ row.expr.length);
      const [lo, hi] = row.x;
      const [alo, ahi] = row.a ?? [0.5, 2];
      const bad: string[] = [];
      let checked = 0;
      for (let i = 0; i < POINTS; i++) {
        const x = lo + (hi - lo) * rnd();
        const a = alo + (ahi - alo) * rnd();
        if (row.kinks?.some((k) => Math.abs(x - k) < 1e-3)) continue;
        checked++;
        const fd1 = stencil((t) => f(t, a), x);
        if (!nearlyEqual(f1(x, a), fd1, FD_TOL, FD_TOL * Math.max(1, Math.abs(f(x, a))))) bad.push(`d1 at x=${x} a=${a}: ${f1(x, a)} vs ${fd1}`);
        const fd2 = stencil((t) => f1(t, a), x);
        if (!nearlyEqual(f2(x, a), fd2, FD_TOL, FD_TOL * Math.max(1, Math.abs(f1(x, a))))) bad.push(`d2 at x=${x} a=${a}: ${f2(x, a)} vs ${fd2}`);
      }
      expect(checked).toBeGreaterThan(POINTS * 0.9);
      expect(bad).toEqual([]);
    });
  }

  it("has a row for every built-in", () => {
    const covered = new Set(ROWS.flatMap((r) => [...r.expr.matchAll(/([a-z0-9]+)\(/g)].map((m) => m[1]!)));
    expect([...BUILTINS.keys()].filter((b) => !covered.has(b))).toEqual([]);
  });
});

describe("derivatives agree with mathjs's derivative", () => {
  /**
   * Both sides are exact formulas evaluated in doubles; they differ only in how the terms are arranged,
   * so they agree to about ε times the terms' size. 1e-10 relative, with an absolute floor of 1e-11 for
   * derivatives that cancel to near zero (the entropy's at 1/2), is far above that and far below any
   * difference a wrong rule makes.
   */
  const REL = 1e-10;
  const ABS = 1e-11;
  for (const row of ROWS.filter((r) => r.mathjs !== undefined)) {
    it(`d/dx ${row.expr}`, () => {
      const ours = compileIn(differentiate(parseExpr(row.expr), "x"));
      const theirs = mathDerivative(row.mathjs!, "x").compile();
      const rnd = seededRandom(0xa7b ^ row.expr.length);
      const [lo, hi] = row.x;
      const [alo, ahi] = row.a ?? [0.5, 2];
      const bad: string[] = [];
      for (let i = 0; i < POINTS; i++) {
        const x = lo + (hi - lo) * rnd();
        const a = alo + (ahi - alo) * rnd();
        if (row.kinks?.some((k) => Math.abs(x - k) < 1e-3)) continue;
        const want = Number(theirs.evaluate({ x, a }));
        if (!nearlyEqual(ours(x, a), want, REL, ABS)) bad.push(`x=${x} a=${a}: ${ours(x, a)} vs ${want}`);
      }
      expect(bad).toEqual([]);
    });
  }
});

describe("helpers are inlined before differentiating", () => {
  it("differentiates nested helpers that use globals and each other", () => {
    const doc = parse(`param k = 2
def s(z) = 1 / (1 + exp(-k * z))
def h(z) = s(2 * z) * z^2 + s(z)
def g(x, y) = h(x) - y * s(y)
loss t {
  margin(v) = g(v, v^2) + h(-v)
}
`);
    expect(doc.issues).toEqual([]);
    const model = analyseSemantics(doc.ast);
    expect(model.issues).toEqual([]);
    const clause = model.losses[0]!.clauses.get("margin")!;
    const expanded = inlineDefs(clause.value!, helperBodies(model));
    // No call of a helper survives inlining.
    expect(printExpr(expanded)).not.toMatch(/\b[shg]\(/);
    const d1 = differentiate(expanded, "v");
    const scope: CompileScope = { variable: "v", paramSlots: new Map([["k", 0]]), defs: new Map() };
    const f = compileExpr(expanded, scope);
    const f1 = compileExpr(d1, scope);
    // The expanded clause written out by hand, for mathjs.
    const s = (z: string) => `(1 / (1 + exp(-k * (${z}))))`;
    const h = (z: string) => `(${s(`2 * (${z})`)} * (${z})^2 + ${s(z)})`;
    const ref = mathCompile(`${h("v")} - (v^2) * ${s("v^2")} + ${h("-v")}`);
    const rnd = seededRandom(5);
    for (let i = 0; i < POINTS; i++) {
      const v = -3 + 6 * rnd();
      const k = 0.5 + 2 * rnd();
      const p = Float64Array.of(k);
      expect(nearlyEqual(f(v, p), Number(ref.evaluate({ v, k })), 1e-12, 1e-14)).toBe(true);
      const fd = stencil((t) => f(t, p), v);
      expect(nearlyEqual(f1(v, p), fd, FD_TOL, FD_TOL * Math.max(1, Math.abs(f(v, p)))), `v=${v} k=${k}`).toBe(true);
    }
  });

  it("refuses to differentiate an unknown function", () => {
    expect(() => differentiate(parseExpr("mystery(x)"), "x")).toThrow(NotDifferentiable);
  });

  it("treats an expression without the variable as a constant", () => {
    expect(printExpr(differentiate(parseExpr("a^2 + mystery(a)"), "x"))).toBe("0");
  });
});

describe("printed derivatives", () => {
  // Each golden was checked by hand against the textbook derivative before being pinned.
  const GOLDEN: [string, string, string][] = [
    ["-ln(q)", "q", "-(1 / q)"],
    ["(1 - q)^2", "q", "-(2 * (1 - q))"],
    ["q^2", "q", "2 * q"],
    ["q^-2", "q", "-2 * q^-3"],
    ["2^q", "q", "2^q * ln(2)"],
    ["sqrt(q)", "q", "1 / (2 * sqrt(q))"],
    ["logit(q)", "q", "1 / (q * (1 - q))"],
    ["sigmoid(v)", "v", "sigmoid(v) * (1 - sigmoid(v))"],
    ["softplus(-v)", "v", "-sigmoid(-v)"],
    ["ln(1 + exp(-v))", "v", "-(exp(-v) / (1 + exp(-v)))"],
    ["exp(-v^2 / 2)", "v", "-(exp(-(v^2 / 2)) * (2 * v / 2))"],
    ["-(1 - q)^g * ln(q)", "q", "g * (1 - q)^(g - 1) * ln(q) - (1 - q)^g * (1 / q)"],
    ["abs(q - 0.5)", "q", "if q - 0.5 < 0 then -1 else 1"],
    ["if q < 0.5 then q^2 else 1 - q", "q", "if q < 0.5 then 2 * q else -1"],
  ];
  for (const [src, variable, want] of GOLDEN) {
    it(`d/d${variable} ${src} prints as ${want}`, () => {
      expect(printExpr(differentiate(parseExpr(src), variable))).toBe(want);
    });
  }

  it("prints the fewest brackets that keep the meaning", () => {
    const cases: [string, string][] = [
      ["((q))", "q"],
      ["-(q^2)", "-q^2"],
      ["(-q)^2", "(-q)^2"],
      ["(-2)^q", "(-2)^q"],
      ["q^(-2)", "q^-2"],
      ["2^(3^q)", "2^3^q"],
      ["(2^3)^q", "8^q"],
      ["(q^2)^a", "(q^2)^a"],
      ["a - (q - 1)", "a - (q - 1)"],
      ["(a - q) - 1", "a - q - 1"],
      ["a / (q * 2)", "a / (2 * q)"],
      ["(if q < 1 then q else 1) + 2", "(if q < 1 then q else 1) + 2"],
      ["not (q < 1 and q > 0) or q > 2", "not (q < 1 and q > 0) or q > 2"],
    ];
    for (const [src, want] of cases) expect(printExpr(simplify(parseExpr(src))), src).toBe(want);
  });

  it("prints every derivative of the table so that it re-parses to the same function", () => {
    const rnd = seededRandom(77);
    const bad: string[] = [];
    for (const row of ROWS) {
      for (const e of [simplify(parseExpr(row.expr)), differentiate(parseExpr(row.expr), "x")]) {
        const text = printExpr(e);
        const back = parseExpr(text);
        // Printing twice gives the same text: the printer's output is a fixed point.
        if (printExpr(back) !== text) bad.push(`${text} re-prints as ${printExpr(back)}`);
        const f = compileIn(e);
        const g = compileIn(back);
        for (let i = 0; i < 20; i++) {
          const x = row.x[0] + (row.x[1] - row.x[0]) * rnd();
          const a = (row.a ?? [0.5, 2])[0] + ((row.a ?? [0.5, 2])[1] - (row.a ?? [0.5, 2])[0]) * rnd();
          // Printed numbers keep 15 significant digits, so the two may differ in the 15th digit.
          if (!nearlyEqual(f(x, a), g(x, a), 1e-12, 1e-14)) bad.push(`${text} at x=${x}: ${f(x, a)} vs ${g(x, a)}`);
        }
      }
    }
    expect(bad).toEqual([]);
  });

  it("keeps a negative base bracketed so the printed text means the same", () => {
    const e = simplify(parseExpr("(-2)^x"));
    const back = parseExpr(printExpr(e));
    expect(compileIn(back)(2, 1)).toBe(4);
    expect(compileIn(back)(3, 1)).toBe(-8);
  });
});

describe("simplify keeps the value", () => {
  it("agrees with the unsimplified expression on every row of the table", () => {
    const rnd = seededRandom(78);
    const bad: string[] = [];
    for (const row of ROWS) {
      const e = parseExpr(row.expr);
      const f = compileIn(e);
      const g = compileIn(simplify(e));
      for (let i = 0; i < 20; i++) {
        const x = row.x[0] + (row.x[1] - row.x[0]) * rnd();
        if (!nearlyEqual(f(x, 1), g(x, 1), 1e-12, 1e-14)) bad.push(`${row.expr} at x=${x}`);
      }
    }
    expect(bad).toEqual([]);
  });
});
