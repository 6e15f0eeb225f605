/**
 * Semantic diagnostics as data: one annotated document per case. Each `#  ^^^ code: text` line marks the
 * expected issue on the text line above it (see test/support/annotations.ts); a document with no
 * annotation must produce no issue at all. Expected behaviour follows the notation contract
 * (test/reference/notation.md; README.md, "The notation"); the codes come from server/src/issues.ts.
 */
import { describe, expect, it } from "vitest";
import { compileLoss } from "../../server/src/semantics/family.js";
import { analyseDocument } from "../../server/src/pipeline/pipeline.js";
import { checkIssues, parseAnnotations } from "../support/annotations.js";

interface Case {
  name: string;
  doc: string;
}

const CASES: Case[] = [
  {
    name: "a misspelt parameter gets a suggestion",
    doc: `
param alpha = 0.5
loss a {
  l1(q) = (1 - q)^2 + alpah
#                     ^^^^^ unknown-name: did you mean \`alpha\`?
  l0(q) = q^2
}
`,
  },
  {
    name: "an unknown name far from every candidate gets no suggestion",
    doc: `
loss a {
  l1(q) = zzzzzz * (1 - q)
#         ^^^^^^ unknown-name: unknown name \`zzzzzz\`
  l0(q) = q
}
`,
  },
  {
    name: "a misspelt built-in function gets a suggestion",
    doc: `
loss a {
  l1(q) = -lgo(q)
#          ^^^ unknown-function: did you mean \`log\`?
  l0(q) = -ln(1 - q)
}
`,
  },
  {
    name: "a parameter called like a function",
    doc: `
param c = 0.2
loss a {
  l1(q) = c(1 - q)
#         ^ unknown-function: \`c\` is not a function
  l0(q) = q
}
`,
  },
  {
    name: "a helper or built-in used without arguments",
    doc: `
def h(x) = x^2
loss a {
  l1(q) = h + exp
#         ^ unknown-name: \`h\` is a function
#             ^^^ unknown-name: \`exp\` is a function
  l0(q) = q
}
`,
  },
  {
    name: "a helper called with the wrong number of arguments",
    doc: `
def h(x) = x^2
loss a {
  l1(q) = h(1 - q, q)
#         ^^^^^^^^^^^ wrong-arity: \`h\` takes 1 argument but is given 2
  l0(q) = h(q)
}
`,
  },
  {
    name: "a built-in called with the wrong number of arguments",
    doc: `
loss a {
  l1(q) = min(q)
#         ^^^^^^ wrong-arity: \`min\` takes 2 arguments but is given 1
  l0(q) = pow(q, 2, 3)
#         ^^^^^^^^^^^^ wrong-arity: \`pow\` takes 2 arguments but is given 3
}
`,
  },
  {
    name: "the score variable in a probability clause",
    doc: `
loss a {
  l1(q) = softplus(-v)
#                   ^ wrong-variable: this clause is written in \`q\`
  l0(q) = q^2
}
`,
  },
  {
    name: "the probability variable in a margin clause",
    doc: `
loss a {
  margin(v) = ln(1 + exp(-q))
#                         ^ wrong-variable: \`q\` is the variable of the probability scale
}
`,
  },
  {
    name: "a Bayes risk declared in the score variable",
    doc: `
loss a {
  bayes(v) = v * (1 - v)
#       ^ clause-variable-name: \`bayes\` is written in \`q\`, not \`v\`
#            ^ wrong-variable
#                     ^ wrong-variable
}
`,
  },
  {
    name: "a clause declared without its variable",
    doc: `
loss a {
  margin = 1
# ^^^^^^ clause-variable-name: write the clause with its variable: \`margin(v) = …\`
}
`,
  },
  {
    name: "l1 in q and l0 in v mixed",
    doc: `
loss a {
  l1(q) = 1 - q
# ^^ score-partials-need-link
  l0(v) = softplus(v)
#    ^ wrong-variable: must be written in the same variable
}
`,
  },
  {
    name: "a clause variable inside a helper body",
    doc: `
def h(x) = x + q
#              ^ unknown-name: unknown name \`q\`
loss a {
  margin(v) = h(v)
}
`,
  },
  {
    name: "a loss with no primary form",
    doc: `
loss nothing {
#    ^^^^^^^ missing-primary-form: the loss \`nothing\` has no definition
  threshold = 0.3
}
`,
  },
  {
    name: "a weight function and a margin function in one loss",
    doc: `
loss both {
  weight(q) = 1
  margin(v) = softplus(-v)
# ^^^^^^ multiple-primary-forms: already defined by its weight function
}
`,
  },
  {
    name: "the form written first is the one the others are reported against",
    doc: `
loss both {
  margin(v) = softplus(-v)
  weight(q) = 1
# ^^^^^^ multiple-primary-forms: already defined by its margin function
}
`,
  },
  {
    name: "partials and a margin function in one loss",
    doc: `
loss both {
  l1(q) = 1 - q
  l0(q) = q
  margin(v) = softplus(-v)
# ^^^^^^ multiple-primary-forms: already defined by its partial losses
}
`,
  },
  {
    name: "only l1 given",
    doc: `
loss half {
  l1(q) = -ln(q)
# ^^ missing-partial: \`l1\` is given without \`l0\`
}
`,
  },
  {
    name: "only l0 given",
    doc: `
loss half {
  l0(q) = -ln(1 - q)
# ^^ missing-partial: \`l0\` is given without \`l1\`
}
`,
  },
  {
    name: "score partials without a link",
    doc: `
loss scores {
  l1(v) = softplus(-v)
# ^^ score-partials-need-link: need a \`link(q) = …\` clause
  l0(v) = softplus(v)
}
`,
  },
  {
    name: "score partials with a canonical link",
    doc: `
loss scores {
  l1(v) = softplus(-v)
  l0(v) = softplus(v)
  link = canonical
# ^^^^^^^^^^^^^^^^ score-partials-need-link: \`link = canonical\` is derived from partials in \`q\`
}
`,
  },
  {
    name: "score partials with a link are clean",
    doc: `
loss scores {
  l1(v) = softplus(-v)
  l0(v) = softplus(v)
  link(q) = logit(q)
  inverse(v) = sigmoid(v)
}
`,
  },
  {
    name: "two global parameters with one name",
    doc: `
param a = 1
param a = 2
#     ^ duplicate-name: \`a\` is already defined as a parameter
loss x {
  margin(v) = softplus(-a * v)
}
`,
  },
  {
    name: "a parameter and a helper with one name",
    doc: `
param a = 1
def a(x) = x
#   ^ duplicate-name: \`a\` is already defined as a helper
loss x {
  margin(v) = softplus(-a * v)
}
`,
  },
  {
    name: "two losses with one name",
    doc: `
loss b {
  margin(v) = softplus(-v)
}
loss b {
#    ^ duplicate-name: \`b\` is already defined as a loss
  margin(v) = exp(-v)
}
`,
  },
  {
    name: "two local parameters with one name",
    doc: `
loss c(k = 1, k = 2) {
#             ^ duplicate-name: the loss \`c\` has two parameters named \`k\`
  margin(v) = softplus(-k * v)
}
`,
  },
  {
    name: "two helper parameters with one name",
    doc: `
def h(x, x) = x
#        ^ duplicate-name: two parameters named \`x\`
loss c {
  margin(v) = softplus(-h(v, v))
}
`,
  },
  {
    name: "a clause given twice",
    doc: `
loss b {
  l1(q) = 1 - q
  l0(q) = q
  l0(q) = q^2
# ^^ duplicate-clause: the clause \`l0\` is given twice
}
`,
  },
  {
    name: "a default outside its range",
    doc: `
param a = 2 in [0, 1]
#         ^ default-out-of-range: the default 2 lies outside the range [0, 1]
loss x(g = 7 in [0, 5]) {
#          ^ default-out-of-range: the default 7 lies outside the range [0, 5]
  margin(v) = softplus(-a * g * v)
}
`,
  },
  {
    name: "a default on the edge of its range is fine",
    doc: `
param a = 1 in [0, 1]
loss x {
  margin(v) = softplus(-a * v)
}
`,
  },
  {
    name: "an empty range",
    doc: `
param b = 0.5 in [1, 0]
#             ^^^^^^^^^ empty-range: its lower end exceeds its upper end
loss x {
  margin(v) = softplus(-b * v)
}
`,
  },
  {
    name: "a default that is not a constant",
    doc: `
param a = 1
param d = 2 * a
#             ^ non-constant-expression: a parameter default must be a constant; \`a\` is not
loss x {
  margin(v) = softplus(-d * v)
}
`,
  },
  {
    name: "constant defaults may use constants and built-ins",
    doc: `
param a = ln(2) / pi in [0, e]
loss x {
  margin(v) = softplus(-a * v)
}
`,
  },
  {
    name: "a range bound that calls a helper",
    doc: `
def h(x) = x
param a = 0.5 in [0, h(1)]
#                    ^ non-constant-expression: \`h\` is not a built-in
loss x {
  margin(v) = softplus(-a * v)
}
`,
  },
  {
    name: "a helper that calls itself",
    doc: `
def f(x) = 1 + f(x)
#   ^ recursive-def: the helper \`f\` calls itself; helpers cannot be recursive
loss x {
  margin(v) = f(v)
}
`,
  },
  {
    name: "two helpers that call each other",
    doc: `
def g(x) = h(x)
#   ^ recursive-def: calls itself through other helpers
def h(x) = g(x) + 1
#   ^ recursive-def: calls itself through other helpers
loss x {
  margin(v) = g(v)
}
`,
  },
  {
    name: "a misspelt clause gets a suggestion",
    doc: `
loss x {
  margin(v) = softplus(-v)
  weigth(q) = 1
# ^^^^^^ unknown-clause: did you mean \`weight\`?
}
`,
  },
  {
    name: "a misspelt claim gets a suggestion",
    doc: `
loss x {
  margin(v) = softplus(-v)
  expect strictly propr
# ^^^^^^^^^^^^^^^^^^^^^ invalid-expect: did you mean \`expect strictly proper\`?
}
`,
  },
  {
    name: "every documented claim is accepted",
    doc: `
loss x {
  margin(v) = softplus(-v)
  expect proper
  expect strictly proper
  expect improper
  expect convex
  expect lambda >= 2
  expect exponent >= 1 / 2
}
`,
  },
  {
    name: "a lambda claim without its comparison",
    doc: `
loss x {
  margin(v) = softplus(-v)
  expect lambda 2
# ^^^^^^^^^^^^^ invalid-expect: write \`expect lambda >= <number>\`
#               ^ parse-unexpected-token
}
`,
  },
  {
    name: "a comparison on a claim that takes none",
    doc: `
loss x {
  margin(v) = softplus(-v)
  expect proper >= 1
# ^^^^^^^^^^^^^^^^^^ invalid-expect: \`expect proper\` takes no comparison
}
`,
  },
  {
    name: "a threshold outside (0, 1)",
    doc: `
loss x {
  margin(v) = softplus(-v)
  threshold = 1.5
#             ^^^ threshold-out-of-range: it is 1.5
}
`,
  },
  {
    name: "a negative threshold",
    doc: `
loss x {
  margin(v) = softplus(-v)
  threshold = -0.25
#             ^^^^^ threshold-out-of-range: it is -0.25
}
`,
  },
  {
    name: "a threshold given by a parameter is fine",
    doc: `
param c = 0.2 in [0.01, 0.99]
loss x {
  margin(v) = softplus(-v)
  threshold = c
}
`,
  },
  {
    name: "a threshold outside (0, 1) at the parameter defaults",
    doc: `
param c = 1.5
loss x(d = 0.25) {
  margin(v) = softplus(-v)
  threshold = c - d
#             ^^^^^ threshold-out-of-range: at the parameter defaults it is 1.25
}
loss y(c = 0.5) {
#      ^ shadowed-name: hides the global parameter
  margin(v) = softplus(-v)
  threshold = c
}
`,
  },
  {
    name: "a comparison used as a value",
    doc: `
loss x {
  margin(v) = (v < 1) + 2
#              ^^^^^ condition-as-value: a comparison is used where a number is expected
}
`,
  },
  {
    name: "a value used as a condition",
    doc: `
loss x {
  l1(q) = if q then 1 else 2
#            ^ value-as-condition: a number is used where a condition is expected
  l0(q) = q
}
`,
  },
  {
    name: "conditions with and, or, not are fine",
    doc: `
loss x {
  l1(q) = if q < 0.5 and not (q < 0.1 or q > 0.9) then 1 - q else 2 * (1 - q)
  l0(q) = if q <= 0.5 then q else 2 * q - 0.5
}
`,
  },
  {
    name: "a local parameter hides a global one",
    doc: `
param g = 1
loss x(g = 2) {
#      ^ shadowed-name: the loss parameter \`g\` hides the global parameter
  margin(v) = softplus(-g * v)
}
`,
  },
  {
    name: "parameters named after built-ins",
    doc: `
param exp = 2
#     ^^^ shadowed-name: \`exp\` hides the built-in of the same name
loss x(ln = 3) {
#      ^^ shadowed-name: \`ln\` hides the built-in
  margin(v) = exp * ln * exp(-v)
}
`,
  },
  {
    name: "a parameter named like a clause variable",
    doc: `
param q = 0.5
#     ^ shadowed-name: \`q\` is a clause variable
loss x {
  margin(v) = softplus(-v)
}
`,
  },
  {
    name: "object-prototype names are plain parameters",
    doc: `
param __proto__ = 0.5
param constructor = 0.3
param toString = 0.2
loss x(valueOf = 2) {
  margin(v) = softplus(-(__proto__ + constructor + toString + valueOf) * v)
}
`,
  },
  {
    name: "object-prototype names are unknown when undeclared",
    doc: `
loss x {
  margin(v) = softplus(-v) + __proto__ + constructor + hasOwnProperty
#                            ^^^^^^^^^ unknown-name: unknown name \`__proto__\`
#                                        ^^^^^^^^^^^ unknown-name: unknown name \`constructor\`
#                                                      ^^^^^^^^^^^^^^ unknown-name: unknown name \`hasOwnProperty\`
}
`,
  },
  {
    name: "object-prototype names are unknown functions when undeclared",
    doc: `
loss x {
  margin(v) = toString(v) + constructor(v)
#             ^^^^^^^^ unknown-function: unknown function \`toString\`
#                           ^^^^^^^^^^^ unknown-function: unknown function \`constructor\`
}
`,
  },
  {
    name: "object-prototype names as helper and loss names",
    doc: `
def __proto__(constructor) = constructor^2
loss toString {
  margin(v) = __proto__(1 - v)
}
`,
  },
  {
    name: "a non-ASCII parameter name",
    doc: `
param α = 0.5 in [0.1, 2]
loss tilted {
  l1(q) = (1 - q)^(α + 1)
  l0(q) = q^(α + 1) + β
#                     ^ unknown-name: unknown name \`β\`
}
`,
  },
  {
    name: "a clean file has no issue",
    doc: `
# The Brier score and log loss (common practice examples).
param c = 0.3 in [0.01, 0.99]
def s(v) = 1 / (1 + exp(-v))
loss brier {
  l1(q) = (1 - q)^2
  l0(q) = q^2
  threshold = c
  expect strictly proper
}
loss logistic {
  margin(v) = -ln(s(v))
}
`,
  },
];

describe("semantic diagnostics", () => {
  for (const c of CASES) {
    it(c.name, () => {
      checkIssues(c.doc);
    });
  }
});

describe("the annotation helper", () => {
  it("reads ranges from caret columns and messages after the code", () => {
    const doc = "loss a {\n  l1(q) = foo\n#         ^^^ unknown-name: did you\n#   ^ other-code\n}\n";
    expect(parseAnnotations(doc)).toEqual([
      { line: 1, startCharacter: 10, endCharacter: 13, code: "unknown-name", message: "did you" },
      { line: 1, startCharacter: 4, endCharacter: 5, code: "other-code", message: null },
    ]);
  });

  it("fails on a missing, a misplaced or a wrongly worded annotation", () => {
    const missing = "param a = 1\nparam a = 2\n";
    expect(() => checkIssues(missing)).toThrow();
    const misplaced = "param a = 1\nparam a = 2\n#    ^ duplicate-name\n";
    expect(() => checkIssues(misplaced)).toThrow();
    const wrongWords = "param a = 1\nparam a = 2\n#     ^ duplicate-name: as a helper\n";
    expect(() => checkIssues(wrongWords)).toThrow();
    // The correct annotation passes, so the three failures above are due to the annotation alone.
    checkIssues("param a = 1\nparam a = 2\n#     ^ duplicate-name: as a parameter\n");
  });
});

describe("losses with errors are not compiled", () => {
  it("marks a loss with an error and compiles none for it, while a clean loss compiles", () => {
    const analysis = checkIssues(`
loss broken {
  l1(q) = (1 - q)^2 + cc
#                     ^^ unknown-name
  l0(q) = q^2
}
loss brier {
  l1(q) = (1 - q)^2
  l0(q) = q^2
}
`);
    const [broken, brier] = analysis.losses;
    expect(broken!.info.hasErrors).toBe(true);
    expect(broken!.compiled).toBeNull();
    expect(compileLoss(analysis.model, broken!.info)).toBeNull();
    expect(brier!.info.hasErrors).toBe(false);
    expect(brier!.compiled).not.toBeNull();
    expect(brier!.compiled!.family.form).toBe("partials");
  });

  it("marks a loss that uses a broken helper or a global without a value", () => {
    const analysis = checkIssues(`
def h(x) = x + zz
#              ^^ unknown-name
param a = b
#         ^ non-constant-expression
loss viaHelper {
  margin(v) = h(v)
}
loss viaGlobal {
  margin(v) = a * v
}
loss untouched {
  margin(v) = softplus(-v)
}
`);
    expect(analysis.losses.map((l) => [l.info.name, l.info.hasErrors, l.compiled !== null])).toEqual([
      ["viaHelper", true, false],
      ["viaGlobal", true, false],
      ["untouched", false, true],
    ]);
  });

  it("does not compile the second of two losses with one name", () => {
    const analysis = checkIssues(`
loss b {
  margin(v) = softplus(-v)
}
loss b {
#    ^ duplicate-name
  margin(v) = exp(-v)
}
`);
    expect(analysis.losses.map((l) => l.info.hasErrors)).toEqual([false, true]);
    expect(analysis.losses[1]!.compiled).toBeNull();
  });
});

describe("incomplete input", () => {
  it("does not compile a loss whose clause the parser left incomplete", () => {
    const analysis = checkIssues(`
loss cut {
  l1(q) = (1 - q)^2
  l0(q) = 2 * q * (1 -
  }
# ^ parse-unexpected-token: expected an expression
loss fine {
  margin(v) = softplus(-v)
}
`);
    expect(analysis.losses.map((l) => [l.info.name, l.info.hasErrors, l.compiled !== null])).toEqual([
      ["cut", true, false],
      ["fine", false, true],
    ]);
  });

  it("analyses every prefix of a document, and every prefix with a piece cut out, without an internal error", () => {
    const text = `param c = 0.2 in [0.01, 0.99]
def s(v) = 1 / (1 + exp(-2*v))
loss focal(g = 2 in [0, 5]) {
  l1(q) = -(1-q)^g * ln(q)
  l0(q) = -q^g * ln(1-q)
  link(q) = logit(q)
  threshold = c
  expect lambda >= 1
}
loss logistic {
  margin(v) = -ln(s(v)) + if v < 0 and not v > 1 then 0 else 0
}
`;
    const failures: string[] = [];
    for (let i = 0; i <= text.length; i++) {
      for (const t of [text.slice(0, i), text.slice(0, i) + text.slice(i + 5)]) {
        const a = analyseDocument(t, { skipAnalysis: true });
        const internal = a.issues.filter((x) => x.code === "internal-error");
        if (internal.length > 0) failures.push(`${JSON.stringify(t.slice(Math.max(0, i - 30), i))}: ${internal[0]!.message}`);
      }
    }
    expect(failures).toEqual([]);
  });
});
