// Hover texts, checked on annotated documents: `$0` marks the cursor. The one API caller is `checkHover`.
import { readFileSync } from "node:fs";
import * as path from "node:path";
import { describe, expect, it } from "vitest";
import { createLanguageService } from "../../server/src/service/language-service.js";
import { analyseSemantics } from "../../server/src/semantics/model.js";
import { compileLoss } from "../../server/src/semantics/family.js";
import { parse } from "../../server/src/syntax/parse.js";

const service = createLanguageService();

function cursor(src: string): { text: string; offset: number } {
  const i = src.indexOf("$0");
  if (i < 0) throw new Error("fixture without $0");
  return { text: src.slice(0, i) + src.slice(i + 2), offset: i };
}

function checkHover(src: string): string {
  const { text, offset } = cursor(src);
  const h = service.hover(text, offset);
  expect(h, "a hover").not.toBeNull();
  expect(h!.markdown).not.toMatch(/NaN|undefined/);
  return h!.markdown;
}

/** Evaluates a printed expression in q through the real pipeline (parse → resolve → compile). */
function evalInQ(expr: string, q: number): number {
  const model = analyseSemantics(parse(`loss t {\n  l1(q) = ${expr}\n  l0(q) = q\n}\n`).ast);
  const compiled = compileLoss(model, model.losses[0]!);
  expect(compiled, `\`${expr}\` compiles`).not.toBeNull();
  return compiled!.family.instantiate({}).l1!(q);
}

/** The code spans of a line starting with `label` in a hover. */
function formulaAfter(markdown: string, label: string): string {
  const line = markdown.split("\n").find((l) => l.includes(label));
  expect(line, `a line with ${label}`).toBeDefined();
  const m = /`([^`]+)`\s*$/.exec(line!);
  expect(m, `a formula at the end of: ${line}`).not.toBeNull();
  return m![1]!;
}

describe("hover on a loss name", () => {
  it("shows the verdict and says 'not available' for figures the engine did not give", () => {
    const md = checkHover("loss br$0ier {\n  l1(q) = (1 - q)^2\n  l0(q) = q^2\n}\n");
    expect(md).toContain("**loss `brier`**");
    expect(md).toContain("**Verdict:**");
    expect(md).toMatch(/λ.*: (not available|[0-9.e+-]+)/);
    expect(md).toContain("midpoint modulus of f = −H");
  });

  it("explains why a loss with errors is not analysed", () => {
    const md = checkHover("loss h$0alf {\n  l1(q) = -ln(q)\n}\n");
    expect(md).toContain("Not analysed: the loss has errors");
  });
});

describe("hover on a loss name, with the engine's figures", () => {
  it("shows λ = 2 and δ(ε) ≈ ε²/4 for the Brier score", () => {
    // Brier: w = 2 (Reid & Williamson 2010, "Composite Binary Losses", JMLR 11, §5), so λ = 2;
    // f = −H = q² − q has midpoint modulus δ(ε) = ε²/4 (Bao 2023, COLT, §4, the α = 2 case; test/reference/proper-losses.md rows L3, N9).
    const md = checkHover("loss br$0ier {\n  l1(q) = (1 - q)^2\n  l0(q) = q^2\n}\n");
    expect(md).toContain("**Verdict:** strictly proper");
    expect(md).toMatch(/\*\*λ\*\*[^\n]*: 2\b/);
    expect(md).toContain("≈ 0.25·ε²");
    expect(md).toContain("| decision regret | via modulus | direct | ψ-transform |");
  });

  it("shows the minimiser and a recovery map that sends q*(η) back to η for an improper loss", () => {
    // Focal loss (Lin et al. 2017, "Focal Loss for Dense Object Detection", ICCV) is improper for γ > 0;
    // its recovery map follows from the first-order condition (Reid & Williamson 2010, JMLR 11, Cor. 12).
    const src = "loss fo$0cal(g = 2 in [0, 5]) {\n  l1(q) = -(1 - q)^g * ln(q)\n  l0(q) = -q^g * ln(1 - q)\n}\n";
    const { text } = cursor(src);
    const a = service.analyseFull(text).losses[0]!.analysis!;
    const md = checkHover(src);
    expect(md).toContain("**Verdict:** improper at g = 2");
    expect(md).toContain("**minimiser** q*(η)");
    const formula = /posterior recovery\*\*: η = `([^`]+)`/.exec(md)?.[1];
    expect(formula).toBeDefined();
    expect(a.minimiser?.etas.length).toBeGreaterThan(3);
    const model = analyseSemantics(parse(`loss t(g = 2) {\n  l1(q) = ${formula}\n  l0(q) = q\n}\n`).ast);
    const recover = compileLoss(model, model.losses[0]!)!.family.instantiate({}).l1!;
    a.minimiser!.etas.forEach((eta, i) => {
      const q = a.minimiser!.qs[i]!;
      if (q > 0.01 && q < 0.99) expect(recover(q)).toBeCloseTo(eta, 5);
    });
  });
});

describe("hover on a clause name", () => {
  it("gives the Savage partials of the binary entropy: log loss", () => {
    // Savage 1971 (JASA 66); Reid & Williamson 2010, "Composite Binary Losses", JMLR 11, Thm 7:
    // H(q) = −q ln q − (1−q) ln(1−q) gives l1 = −ln q, l0 = −ln(1−q).
    const md = checkHover("loss entropy {\n  bay$0es(q) = -q*ln(q) - (1 - q)*ln(1 - q)\n}\n");
    expect(md).toContain("conditional Bayes risk");
    const l1 = formulaAfter(md, "- l1(q) =");
    const l0 = formulaAfter(md, "- l0(q) =");
    // Readable, not just right: the expanded and collected form.
    expect(l1).toBe("-ln(q)");
    expect(l0).toBe("-ln(1 - q)");
    expect(formulaAfter(md, "weight w(q) = −H″(q)")).toBe("1 / (q - q^2)");
    for (const q of [0.1, 0.3, 0.7]) {
      expect(evalInQ(l1, q)).toBeCloseTo(-Math.log(q), 10);
      expect(evalInQ(l0, q)).toBeCloseTo(-Math.log(1 - q), 10);
    }
  });

  it("gives the Savage partials of the Gini risk q(1−q): the Brier score, and its weight 2", () => {
    // Buja, Stuetzle & Shen 2005, "Loss functions for binary class probability estimation", §3: H = q(1−q) ↔ Brier, w = 2.
    const md = checkHover("loss gini {\n  $0bayes(q) = q * (1 - q)\n}\n");
    const l1 = formulaAfter(md, "- l1(q) =");
    const l0 = formulaAfter(md, "- l0(q) =");
    for (const q of [0.2, 0.5, 0.9]) {
      expect(evalInQ(l1, q)).toBeCloseTo((1 - q) ** 2, 12);
      expect(evalInQ(l0, q)).toBeCloseTo(q ** 2, 12);
    }
    expect(formulaAfter(md, "weight w(q) = −H″(q)")).toBe("2");
  });

  it("gives the weight by stationarity for partial losses: w = −l1′/(1−q) = 1/(q(1−q)) for log loss", () => {
    // Reid & Williamson 2010, "Composite Binary Losses", JMLR 11, Thm 1: w(q) = −l1′(q)/(1−q) = l0′(q)/q; log loss w = 1/(q(1−q)).
    const md = checkHover("loss log {\n  l$0 1(q) = -ln(q)\n  l0(q) = -ln(1 - q)\n}\n".replace("$0 ", "$0"));
    const w = formulaAfter(md, "weight by stationarity");
    for (const q of [0.2, 0.6]) expect(evalInQ(w, q)).toBeCloseTo(1 / (q * (1 - q)), 10);
    expect(md).toContain("Bayes risk if proper");
  });

  it("integrates a polynomial weight into its partial losses: Beta(2,2)", () => {
    // Buja, Stuetzle & Shen 2005, Beta-family weights (from memory); test/reference/proper-losses.md row L10c,
    // computed by Reid & Williamson 2010, JMLR 11, Thm 6 eq. (5): w = q(1−q) gives
    // l1 = 1/12 − q²/2 + 2q³/3 − q⁴/4 and l0 = q³/3 − q⁴/4.
    const md = checkHover("loss beta22 {\n  weig$0ht(q) = q * (1 - q)\n}\n");
    const l1 = formulaAfter(md, "- l1(q) = ∫_q^1");
    const l0 = formulaAfter(md, "- l0(q) = ∫_0^q");
    for (const q of [0.1, 0.5, 0.8]) {
      expect(evalInQ(l1, q)).toBeCloseTo(1 / 12 - q ** 2 / 2 + (2 * q ** 3) / 3 - q ** 4 / 4, 12);
      expect(evalInQ(l0, q)).toBeCloseTo(q ** 3 / 3 - q ** 4 / 4, 12);
    }
  });
});

describe("hover on names", () => {
  it("shows a global parameter's default, range and documentation", () => {
    const md = checkHover("# Cost of a false alarm.\nparam c = 0.2 in [0.01, 0.99]\nloss a {\n  l1(q) = (1 - q)^2 * $0c\n  l0(q) = q^2\n}\n");
    expect(md).toContain("default 0.2 in [0.01, 0.99]");
    expect(md).toContain("Cost of a false alarm.");
    expect(md).toContain("used by `a`");
  });

  it("shows a loss-local parameter without a range", () => {
    const md = checkHover("loss focal(g$0 = 2) {\n  l1(q) = -(1 - q)^g * ln(q)\n  l0(q) = -q^g * ln(1 - q)\n}\n");
    expect(md).toContain("default 2 (no declared range)");
  });

  it("shows a built-in's signature and definition", () => {
    const md = checkHover("loss a {\n  l1(q) = -l$0n(q)\n  l0(q) = -ln(1 - q)\n}\n");
    expect(md).toContain("`ln(x)`");
    expect(md).toContain("natural logarithm");
  });

  it("shows a helper's definition", () => {
    const md = checkHover("def sq(x) = x * x\nloss a {\n  l1(q) = s$0q(1 - q)\n  l0(q) = sq(q)\n}\n");
    expect(md).toContain("`def sq(x) = x * x`");
  });

  it("says what the clause variable is", () => {
    expect(checkHover("loss a {\n  l1(q) = 1 - $0q\n  l0(q) = q\n}\n")).toContain("predicted probability");
  });

  it("has nothing to say on whitespace or past the end", () => {
    expect(service.hover("loss a {\n\n}\n", 9)).toBeNull();
    expect(service.hover("loss a {}\n", 999)).toBeNull();
  });
});

describe("hovers over a whole sample", () => {
  it("never print NaN or undefined anywhere in samples/forms.loss", () => {
    const text = readFileSync(path.join(__dirname, "..", "..", "samples", "forms.loss"), "utf8");
    let count = 0;
    for (let offset = 0; offset < text.length; offset += 2) {
      const h = service.hover(text, offset);
      if (!h) continue;
      count++;
      expect(h.markdown).not.toMatch(/NaN|undefined|\[object/);
    }
    expect(count).toBeGreaterThan(100);
  });
});
