/**
 * The closure compiler against an independent evaluator: every expression of the table is compiled and
 * compared with mathjs's `evaluate` (mathjs 15, a general-purpose library) at 200 seeded random points.
 * Built-ins mathjs lacks are compared with their defining formulas written in mathjs, and `erf`,
 * `normcdf`, `probit` also with tabulated values.
 */
import { compile as mathCompile } from "mathjs";
import { describe, expect, it } from "vitest";
import { nearlyEqual } from "../../server/src/analysis/numeric/tolerance.js";
import { seededRandom } from "../../server/src/analysis/numeric/sampling.js";
import { BUILTINS } from "../../server/src/semantics/builtins.js";
import { compileDef, compileExpr, CompileError, evalConstant, type CompileScope } from "../../server/src/semantics/compile.js";
import { analyseDocument } from "../../server/src/pipeline/pipeline.js";
import type { Expr } from "../../server/src/syntax/ast.js";
import { parse } from "../../server/src/syntax/parse.js";

/**
 * Relative tolerance between the compiled closure and mathjs. Both evaluate in IEEE doubles with the same
 * `Math` kernels and differ only in evaluation order or in an algebraically equal formula (sigmoid split by
 * sign, softplus via log1p), i.e. by a few ulps (~1e-15); 1e-12 leaves room for that rounding to be
 * amplified through a dozen operations, while a wrong operator, precedence or kernel differs by far more.
 */
const REL = 1e-12;
/** Absolute floor for results that cancel to about zero (logit near 1/2, sin near a multiple of π). */
const ABS = 1e-14;
const POINTS = 200;

/** Parses one expression of the notation (as the body of a helper `t(x, a)`); fails on any parse issue. */
function parseExpr(src: string): Expr {
  const r = parse(`def t(x, a) = ${src}`);
  expect(r.issues, src).toEqual([]);
  const item = r.ast.items[0];
  if (!item || item.kind !== "def" || !item.body) throw new Error(`no expression in ${src}`);
  return item.body;
}

const SCOPE: CompileScope = { variable: "x", paramSlots: new Map([["a", 0]]), defs: new Map() };

function compileSrc(src: string, scope: CompileScope = SCOPE): (x: number, a?: number) => number {
  const f = compileExpr(parseExpr(src), scope);
  return (x, a = 1) => f(x, Float64Array.of(a));
}

interface Row {
  /** The notation's expression in `x` (the variable) and `a` (a parameter). */
  expr: string;
  /** The same function written for mathjs (where mathjs lacks the built-in: its defining formula). */
  mathjs: string;
  x: [number, number];
  a?: [number, number];
}

const ROWS: Row[] = [
  { expr: "ln(x)", mathjs: "log(x)", x: [1e-3, 50] },
  { expr: "log(x)", mathjs: "log(x)", x: [1e-3, 50] },
  { expr: "log2(x)", mathjs: "log2(x)", x: [1e-3, 50] },
  { expr: "log10(x)", mathjs: "log10(x)", x: [1e-3, 50] },
  { expr: "exp(x)", mathjs: "exp(x)", x: [-20, 20] },
  { expr: "sqrt(x)", mathjs: "sqrt(x)", x: [0, 50] },
  { expr: "abs(x - a)", mathjs: "abs(x - a)", x: [-5, 5] },
  { expr: "min(x, a)", mathjs: "min(x, a)", x: [0, 3] },
  { expr: "max(x, a)", mathjs: "max(x, a)", x: [0, 3] },
  { expr: "pow(x, a)", mathjs: "pow(x, a)", x: [0.01, 5], a: [-3, 3] },
  { expr: "sin(x)", mathjs: "sin(x)", x: [-7, 7] },
  { expr: "cos(x)", mathjs: "cos(x)", x: [-7, 7] },
  { expr: "tan(x)", mathjs: "tan(x)", x: [-1.5, 1.5] },
  { expr: "asin(x)", mathjs: "asin(x)", x: [-1, 1] },
  { expr: "acos(x)", mathjs: "acos(x)", x: [-1, 1] },
  { expr: "atan(x)", mathjs: "atan(x)", x: [-20, 20] },
  { expr: "sinh(x)", mathjs: "sinh(x)", x: [-10, 10] },
  { expr: "cosh(x)", mathjs: "cosh(x)", x: [-10, 10] },
  { expr: "tanh(x)", mathjs: "tanh(x)", x: [-10, 10] },
  { expr: "log1p(x)", mathjs: "log1p(x)", x: [-0.99, 10] },
  { expr: "expm1(x)", mathjs: "expm1(x)", x: [-5, 5] },
  { expr: "sigmoid(x)", mathjs: "1 / (1 + exp(-x))", x: [-30, 30] },
  { expr: "logit(x)", mathjs: "log(x / (1 - x))", x: [1e-3, 1 - 1e-3] },
  { expr: "softplus(x)", mathjs: "log1p(exp(x))", x: [-30, 30] },
  { expr: "erf(x)", mathjs: "erf(x)", x: [-5, 5] },
  // Below x = -2 the formula 1 + erf(…) loses digits to cancellation, so the range stops there.
  { expr: "normcdf(x)", mathjs: "(1 + erf(x / sqrt(2))) / 2", x: [-2, 6] },
  // Operators and precedence: mathjs strings are fully bracketed so they do not rely on its precedence.
  { expr: "x^a^2", mathjs: "x^(a^2)", x: [0.1, 2], a: [-1.2, 1.2] },
  { expr: "-x^2", mathjs: "-(x^2)", x: [-3, 3] },
  { expr: "-x^2 + a", mathjs: "(-(x^2)) + a", x: [-3, 3] },
  { expr: "2^-x", mathjs: "2^(-x)", x: [-5, 5] },
  { expr: "x^-a", mathjs: "x^(-a)", x: [0.1, 4], a: [0, 3] },
  { expr: "-x^-2", mathjs: "-(x^(-2))", x: [0.1, 4] },
  { expr: "a - x * 3 / (x + 1) - 2", mathjs: "((a - ((x * 3) / (x + 1))) - 2)", x: [0, 5] },
  { expr: "x / a / 2", mathjs: "(x / a) / 2", x: [-5, 5] },
  { expr: "x - a - 1", mathjs: "(x - a) - 1", x: [-5, 5] },
  { expr: "(1 - x)^a * ln(x) / x", mathjs: "(((1 - x)^a) * log(x)) / x", x: [0.01, 0.99], a: [0, 3] },
  { expr: "pi * x + e", mathjs: "(pi * x) + e", x: [-5, 5] },
  { expr: "--x", mathjs: "-(-x)", x: [-5, 5] },
  { expr: "-(x - a)^2", mathjs: "-((x - a)^2)", x: [-2, 2] },
  // Conditionals with comparisons and the logical operators.
  { expr: "if x < 0.5 then x^2 else 1 - x", mathjs: "(x < 0.5) ? (x^2) : (1 - x)", x: [0, 1] },
  {
    expr: "if x < a and not (x < 0.1) then x else 2 * x",
    mathjs: "((x < a) and (not (x < 0.1))) ? x : (2 * x)",
    x: [0, 1],
    a: [0.2, 0.8],
  },
  { expr: "if x <= 0.2 or x >= a then -ln(x) else x", mathjs: "((x <= 0.2) or (x >= a)) ? (-log(x)) : x", x: [0.01, 1], a: [0.5, 0.9] },
  { expr: "if not x > a then 1 else if x > 2 * a then 3 else 2", mathjs: "(not (x > a)) ? 1 : ((x > 2 * a) ? 3 : 2)", x: [0, 1], a: [0.2, 0.45] },
];

describe("compiled closures agree with mathjs", () => {
  for (const row of ROWS) {
    it(`${row.expr}  ~  ${row.mathjs}`, () => {
      const ours = compileSrc(row.expr);
      const theirs = mathCompile(row.mathjs);
      const rnd = seededRandom(0x5eed ^ row.expr.length);
      const [xlo, xhi] = row.x;
      const [alo, ahi] = row.a ?? [0.5, 2];
      const bad: string[] = [];
      for (let i = 0; i < POINTS; i++) {
        const x = xlo + (xhi - xlo) * rnd();
        const a = alo + (ahi - alo) * rnd();
        const got = ours(x, a);
        const want = Number(theirs.evaluate({ x, a }));
        if (!nearlyEqual(got, want, REL, ABS)) bad.push(`x=${x} a=${a}: ${got} vs ${want}`);
      }
      expect(bad).toEqual([]);
    });
  }

  it("covers every built-in of the notation", () => {
    // probit has no mathjs counterpart; it is checked below by inverting mathjs's erf.
    const covered = new Set(ROWS.flatMap((r) => [...r.expr.matchAll(/([a-z0-9]+)\(/g)].map((m) => m[1]!)));
    covered.add("probit");
    expect([...BUILTINS.keys()].filter((b) => !covered.has(b))).toEqual([]);
  });

  it("probit inverts mathjs's normal CDF", () => {
    const ours = compileSrc("probit(x)");
    const cdf = mathCompile("(1 + erf(z / sqrt(2))) / 2");
    const rnd = seededRandom(97);
    const bad: string[] = [];
    for (let i = 0; i < POINTS; i++) {
      // Probabilities in [0.02, 0.999]: below 0.02 the mathjs formula 1 + erf(…) cancels too many digits.
      const p = 0.02 + 0.979 * rnd();
      const back = Number(cdf.evaluate({ z: ours(p) }));
      if (!nearlyEqual(back, p, REL, ABS)) bad.push(`p=${p}: Φ(probit(p)) = ${back}`);
    }
    expect(bad).toEqual([]);
  });
});

describe("erf, normcdf and probit at tabulated values", () => {
  // The tables give 15 decimals, so the check is to 1e-15 absolute (plus one unit of double rounding).
  const TABLE = 2e-15;
  it("erf(0.5) and erf(1)", () => {
    // Abramowitz & Stegun 1964, "Handbook of Mathematical Functions", Table 7.1 (erf to 15 decimals).
    expect(Math.abs(compileSrc("erf(x)")(0.5) - 0.520499877813047)).toBeLessThan(TABLE);
    expect(Math.abs(compileSrc("erf(x)")(1) - 0.842700792949715)).toBeLessThan(TABLE);
  });

  it("Φ(1.96)", () => {
    // Abramowitz & Stegun 1964, "Handbook of Mathematical Functions", Table 26.1 (P(x) to 15 decimals).
    expect(Math.abs(compileSrc("normcdf(x)")(1.96) - 0.97500210485178)).toBeLessThan(TABLE);
  });

  it("Φ⁻¹(0.975)", () => {
    // Computed: Newton's method on mathjs's erf gives 1.959963984540054; Abramowitz & Stegun 1964,
    // Table 26.5, gives the 2.5% point as 1.959964 (6 decimals), which this agrees with.
    const cdf = mathCompile("(1 + erf(z / sqrt(2))) / 2");
    let z = 2;
    for (let k = 0; k < 20; k++) z -= (Number(cdf.evaluate({ z })) - 0.975) / (Math.exp((-z * z) / 2) / Math.sqrt(2 * Math.PI));
    expect(Math.abs(z - 1.959964)).toBeLessThan(5e-7);
    expect(nearlyEqual(compileSrc("probit(x)")(0.975), z, 1e-14)).toBe(true);
  });
});

describe("precedence and associativity", () => {
  // Exact small-integer arithmetic: the notation contract fixes these readings.
  it("reads ^ as right-associative", () => {
    expect(compileSrc("2^3^2")(0)).toBe(512);
    expect(compileSrc("(2^3)^2")(0)).toBe(64);
  });

  it("binds unary minus looser than ^", () => {
    expect(compileSrc("-x^2")(3)).toBe(-9);
    expect(compileSrc("(-x)^2")(3)).toBe(9);
    expect(compileSrc("2^-1")(0)).toBe(0.5);
    expect(compileSrc("-2^2")(0)).toBe(-4);
  });

  it("reads - and / as left-associative", () => {
    expect(compileSrc("10 - 4 - 3")(0)).toBe(3);
    expect(compileSrc("64 / 4 / 2")(0)).toBe(8);
  });
});

describe("helpers and globals", () => {
  it("compiles a helper that reads a global parameter", () => {
    const defBody = parseExpr("1 / (1 + exp(-k * z))");
    const slots = new Map([["k", 0]]);
    const s = compileDef(defBody, ["z"], { paramSlots: slots, defs: new Map() });
    const f = compileExpr(parseExpr("s(x) + s(2 * x) * k"), { variable: "x", paramSlots: slots, defs: new Map([["s", s]]) });
    const ref = mathCompile("1 / (1 + exp(-k * x)) + (1 / (1 + exp(-k * 2 * x))) * k");
    const rnd = seededRandom(11);
    for (let i = 0; i < POINTS; i++) {
      const x = -5 + 10 * rnd();
      const k = 0.1 + 3 * rnd();
      expect(nearlyEqual(f(x, Float64Array.of(k)), Number(ref.evaluate({ x, k })), REL, ABS)).toBe(true);
    }
  });

  it("compiles a whole loss whose clauses use helpers, globals and local parameters", () => {
    const doc = analyseDocument(
      `param c = 0.3
def s(z) = 1 / (1 + exp(-z))
def h(z) = c * s(z) + z^2
loss mix(g = 2) {
  margin(v) = g * h(v) - ln(s(v))
}
`,
      { skipAnalysis: true },
    );
    expect(doc.issues).toEqual([]);
    const family = doc.losses[0]!.compiled!.family;
    const ref = mathCompile("g * (c * (1 / (1 + exp(-v))) + v^2) - log(1 / (1 + exp(-v)))");
    const rnd = seededRandom(12);
    for (let i = 0; i < POINTS; i++) {
      const g = 3 * rnd();
      const c = rnd();
      const v = -6 + 12 * rnd();
      const spec = family.instantiate({ g, c });
      expect(nearlyEqual(spec.margin!(v), Number(ref.evaluate({ g, c, v })), REL, ABS)).toBe(true);
    }
  });
});

describe("names that are not plain ASCII or hide built-ins", () => {
  it("compiles a loss whose parameter is named α", () => {
    const doc = analyseDocument("param α = 0.5 in [0.1, 2]\nloss tilted {\n  l1(q) = (1 - q)^(α + 1)\n  l0(q) = q^(α + 1)\n}\n", { skipAnalysis: true });
    expect(doc.issues).toEqual([]);
    const family = doc.losses[0]!.compiled!.family;
    expect(family.params).toEqual([{ name: "α", default: 0.5, lo: 0.1, hi: 2 }]);
    expect(family.instantiate({}).l1!(0.5)).toBe(Math.pow(0.5, 1.5));
    expect(family.instantiate({ α: 1 }).l0!(0.5)).toBe(0.25);
  });

  it("reads a parameter named exp as a value and still calls the built-in exp", () => {
    const doc = analyseDocument("param exp = 2\nloss x {\n  margin(v) = exp * exp(-v)\n}\n", { skipAnalysis: true });
    expect(doc.issues.map((i) => i.code)).toEqual(["shadowed-name"]);
    const spec = doc.losses[0]!.compiled!.family.instantiate({ exp: 3 });
    expect(spec.margin!(1)).toBe(3 * Math.exp(-1));
  });
});

describe("object-prototype names are plain identifiers", () => {
  const slots = new Map([["__proto__", 0], ["constructor", 1], ["toString", 2]]);
  const scope: CompileScope = { variable: "x", paramSlots: slots, defs: new Map() };

  it("reads parameters named __proto__, constructor and toString from their slots", () => {
    const f = compileExpr(parseExpr("__proto__ * x + constructor - toString"), scope);
    expect(f(2, Float64Array.of(3, 5, 7))).toBe(3 * 2 + 5 - 7);
  });

  it("never resolves an undeclared prototype member", () => {
    const none: CompileScope = { variable: "x", paramSlots: new Map(), defs: new Map() };
    for (const src of ["__proto__", "constructor", "toString", "hasOwnProperty", "valueOf"]) {
      expect(() => compileExpr(parseExpr(`x + ${src}`), none), src).toThrow(CompileError);
      expect(() => compileExpr(parseExpr(`${src}(x)`), none), `${src}(x)`).toThrow(CompileError);
    }
    expect(evalConstant(parseExpr("constructor"))).toBeNull();
  });

  it("compiles a document whose parameters and helpers have such names", () => {
    const doc = analyseDocument(
      `param __proto__ = 0.5
param constructor = 2
def toString(hasOwnProperty) = hasOwnProperty * constructor
loss valueOf {
  margin(v) = __proto__ * toString(v)
}
`,
      { skipAnalysis: true },
    );
    expect(doc.issues).toEqual([]);
    const family = doc.losses[0]!.compiled!.family;
    expect(family.params.map((p) => [p.name, p.default])).toEqual([["__proto__", 0.5], ["constructor", 2]]);
    // Defaults are used when no value is given, even though `{}` inherits `__proto__` and `constructor`.
    expect(family.instantiate({}).margin!(3)).toBe(0.5 * 3 * 2);
    expect(family.instantiate({ __proto__: 0.25 } as unknown as Record<string, number>).margin!(3)).toBe(0.5 * 3 * 2);
    const own: Record<string, number> = Object.fromEntries([["__proto__", 0.25], ["constructor", 4]]);
    expect(family.instantiate(own).margin!(3)).toBe(0.25 * 3 * 4);
  });
});

describe("constant evaluation", () => {
  it("evaluates numbers, constants and built-ins, and refuses names", () => {
    expect(evalConstant(parseExpr("ln(2) / pi"))).toBe(Math.log(2) / Math.PI);
    expect(evalConstant(parseExpr("e^2"))).toBe(Math.pow(Math.E, 2));
    expect(evalConstant(parseExpr("-0.25"))).toBe(-0.25);
    expect(evalConstant(parseExpr("a + 1"))).toBeNull();
    expect(evalConstant(parseExpr("1 < 2"))).toBeNull();
  });
});
