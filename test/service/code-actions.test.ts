// Quick fixes and refactors as before/after text. `checkFix` is the one API caller: it takes the text
// (with `$0` at the range to ask about), picks the action whose title matches, and returns the text after it.
import { describe, expect, it } from "vitest";
import type { Issue } from "../../server/src/issue.js";
import { makeIssue } from "../../server/src/issue.js";
import { createLanguageService } from "../../server/src/service/language-service.js";
import { applyEdits } from "../../server/src/service/navigation.js";
import { analyseSemantics } from "../../server/src/semantics/model.js";
import { compileLoss } from "../../server/src/semantics/family.js";
import { parse } from "../../server/src/syntax/parse.js";

const service = createLanguageService();

function cursor(src: string): { text: string; offset: number } {
  const i = src.indexOf("$0");
  if (i < 0) throw new Error("fixture without $0");
  return { text: src.slice(0, i) + src.slice(i + 2), offset: i };
}

/** Titles of the actions at the cursor (with the document's own issues there, or the given ones). */
function titlesAt(src: string, issues?: (text: string) => Issue[]): string[] {
  const { text, offset } = cursor(src);
  return service.codeActions(text, { start: offset, end: offset }, issues?.(text)).map((a) => a.title);
}

function checkFix(src: string, title: RegExp, issues?: (text: string) => Issue[]): string {
  const { text, offset } = cursor(src);
  const actions = service.codeActions(text, { start: offset, end: offset }, issues?.(text));
  const a = actions.find((x) => title.test(x.title));
  expect(a, `an action matching ${title} among ${JSON.stringify(actions.map((x) => x.title))}`).toBeDefined();
  return applyEdits(text, a!.edits);
}

/** Evaluates a partial loss of the first loss of a text at q, through the real pipeline. */
function evalClause(text: string, clause: "l1" | "l0", q: number): number {
  const model = analyseSemantics(parse(text).ast);
  const compiled = compileLoss(model, model.losses[0]!);
  expect(compiled, "the fixed loss compiles").not.toBeNull();
  const spec = compiled!.family.instantiate({});
  return (clause === "l1" ? spec.l1! : spec.l0!)(q);
}

/** The issues of the text, plus a synthetic engine finding on the loss (the engine does not emit it in this build). */
function withFinding(code: "bayes-mismatch" | "posterior-recovery", loss: string) {
  return (text: string): Issue[] => {
    const at = text.indexOf(`loss ${loss}`) + 5;
    return [makeIssue(code, `${code} (test)`, { start: at, end: at + loss.length }, { data: { loss } })];
  };
}

describe("suggestion fixes", () => {
  it("replaces a misspelt parameter by the suggested one", () => {
    const after = checkFix("param c = 0.2\nloss a {\n  l1(q) = (1 - q)^2 + c$0c\n  l0(q) = q^2\n}\n", /Change to `c`/);
    expect(after).toBe("param c = 0.2\nloss a {\n  l1(q) = (1 - q)^2 + c\n  l0(q) = q^2\n}\n");
  });

  it("replaces a misspelt function and a misspelt clause", () => {
    expect(checkFix("loss a {\n  l1(q) = -ln$0n(q)\n  l0(q) = -ln(1 - q)\n}\n", /Change to `ln`/)).toContain("l1(q) = -ln(q)");
    expect(checkFix("loss a {\n  weig$0th(q) = 1\n}\n", /Change to `weight`/)).toBe("loss a {\n  weight(q) = 1\n}\n");
  });

  it("replaces a misspelt claim", () => {
    const after = checkFix("loss a {\n  l1(q) = (1 - q)^2\n  l0(q) = q^2\n  expect strictly pro$0pper\n}\n", /Change to `expect strictly proper`/);
    expect(after).toContain("  expect strictly proper\n");
  });
});

describe("completing a missing partial loss", () => {
  it("adds l0 = q² to l1 = (1 − q)²: the Brier score", () => {
    // Brier 1950; w(c) = −l1′(c)/(1−c) = 2 and l0(q) = ∫_0^q c·w(c) dc = q² (Reid & Williamson 2010, JMLR 11, Thm 6).
    const after = checkFix("loss a {\n  l$01(q) = (1 - q)^2\n}\n", /Add `l0\(q\) = /);
    expect(after).toBe("loss a {\n  l1(q) = (1 - q)^2\n  l0(q) = q^2\n}\n");
  });

  it("adds l0 = −ln(1 − q) to l1 = −ln q: log loss", () => {
    // Good 1952; w = 1/(c(1−c)), ∫_0^q c·w(c) dc = −ln(1−q) (Reid & Williamson 2010, JMLR 11, Thm 6).
    expect(checkFix("loss a {\n  l$01(q) = -ln(q)\n}\n", /Add `l0/)).toBe("loss a {\n  l1(q) = -ln(q)\n  l0(q) = -ln(1 - q)\n}\n");
  });

  it("adds l1 to a given l0 with the document's indentation", () => {
    // Beta(2,2) weight (Buja, Stuetzle & Shen 2005, from memory); test/reference/proper-losses.md row L10c,
    // computed by Reid & Williamson 2010, JMLR 11, Thm 6 eq. (5): l1 = 1/12 − q²/2 + 2q³/3 − q⁴/4.
    const after = checkFix("loss a {\n    l$00(q) = q^3 / 3 - q^4 / 4\n}\n", /Add `l1/);
    expect(after).toMatch(/\n {4}l0\(q\) = q\^3 \/ 3 - q\^4 \/ 4\n {4}l1\(q\) = /);
    for (const q of [0.1, 0.5, 0.9]) expect(evalClause(after, "l1", q)).toBeCloseTo(1 / 12 - q ** 2 / 2 + (2 * q ** 3) / 3 - q ** 4 / 4, 12);
  });

  it("offers nothing when the completion would not be proper (l1 increasing) or has no closed form", () => {
    expect(titlesAt("loss a {\n  l$01(q) = q\n}\n").some((t) => t.startsWith("Add `l0"))).toBe(false);
    expect(titlesAt("loss a(g = 2) {\n  l$01(q) = -(1 - q)^g * ln(q)\n}\n").some((t) => t.startsWith("Add `l0"))).toBe(false);
  });
});

describe("engine-driven fixes", () => {
  it("replaces partials that disagree with the declared Bayes risk by its Savage partials", () => {
    // Savage 1971 (JASA 66): H = 2q(1−q) gives l1 = H + (1−q)H′ = 2(1−q)², l0 = H − qH′ = 2q².
    const src = "loss wrong_bayes {\n  l1(q) = (1 - q)^2\n  l0(q) = q^2\n  bay$0es(q) = 2 * q * (1 - q)\n}\n";
    const after = checkFix(src, /Savage partials/, withFinding("bayes-mismatch", "wrong_bayes"));
    expect(after).toContain("bayes(q) = 2 * q * (1 - q)");
    for (const q of [0.15, 0.5, 0.85]) {
      expect(evalClause(after, "l1", q)).toBeCloseTo(2 * (1 - q) ** 2, 12);
      expect(evalClause(after, "l0", q)).toBeCloseTo(2 * q ** 2, 12);
    }
  });

  it("inserts the posterior-recovery map as a helper", () => {
    // Computed: for l1 = (1−q)², l0 = 2q², the first-order condition η·l1′ + (1−η)·l0′ = 0 gives
    // q*(η) = η/(2 − η) and η = l0′/(l0′ − l1′) = 2q/(1 + q).
    const src = "loss skewed {\n  l1(q) = (1 - q)^2\n  l0(q) = 2 * q^2\n}\n$0";
    const after = checkFix(src, /posterior-recovery map of `skewed`/, withFinding("posterior-recovery", "skewed"));
    expect(after).toMatch(/\n# Posterior recovery for `skewed`: .*\ndef skewed_recovery\(q\) = /);
    const check = `${after}loss use {\n  l1(q) = skewed_recovery(q)\n  l0(q) = q\n}\n`;
    const model = analyseSemantics(parse(check).ast);
    const use = model.losses.find((l) => l.name === "use")!;
    const fn = compileLoss(model, use)!.family.instantiate({}).l1!;
    for (const q of [0.2, 0.5, 0.8]) expect(fn(q)).toBeCloseTo((2 * q) / (1 + q), 12);
  });

  it("passes loss-local parameters to the recovery helper", () => {
    const src = "loss focal(g = 2 in [0, 5]) {\n  l1(q) = -(1 - q)^g * ln(q)\n  l0(q) = -q^g * ln(1 - q)\n}\n$0";
    const after = checkFix(src, /posterior-recovery/, withFinding("posterior-recovery", "focal"));
    expect(after).toMatch(/def focal_recovery\(q, g\) = /);
    const { issues } = parse(after);
    expect(issues).toEqual([]);
    expect(analyseSemantics(parse(after).ast).issues.filter((i) => i.severity === "error")).toEqual([]);
  });
});

describe("refactors", () => {
  it("adds `link = canonical` to partial losses without a link", () => {
    const after = checkFix("loss a {\n  l1(q) = (1 - q)^2\n  l0(q) = q^2$0\n}\n", /Add `link = canonical`/);
    expect(after).toBe("loss a {\n  l1(q) = (1 - q)^2\n  l0(q) = q^2\n  link = canonical\n}\n");
  });

  it("does not offer it when the loss already has a link", () => {
    expect(titlesAt("loss a {\n  l1(q) = (1 - q)^2\n  l0(q) = q^2$0\n  link(q) = logit(q)\n}\n")).not.toContain("Add `link = canonical`");
  });

  it("offers nothing outside losses", () => {
    expect(titlesAt("param c = 0.2$0\n")).toEqual([]);
  });
});
