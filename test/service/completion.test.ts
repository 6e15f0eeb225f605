// Completion and signature help on annotated documents (`$0` = cursor). `checkCompletion` is the one API caller.
import { describe, expect, it } from "vitest";
import { createLanguageService } from "../../server/src/service/language-service.js";

const service = createLanguageService();

function cursor(src: string): { text: string; offset: number } {
  const i = src.indexOf("$0");
  if (i < 0) throw new Error("fixture without $0");
  return { text: src.slice(0, i) + src.slice(i + 2), offset: i };
}

function checkCompletion(src: string): string[] {
  const { text, offset } = cursor(src);
  return service.completions(text, offset).map((c) => c.label);
}

function checkSignature(src: string) {
  const { text, offset } = cursor(src);
  return service.signatureHelp(text, offset);
}

describe("completion", () => {
  it("offers the item keywords at the start of a top-level line", () => {
    expect(checkCompletion("$0")).toEqual(expect.arrayContaining(["param", "def", "loss"]));
    expect(checkCompletion("loss a {\n  l1(q) = q\n  l0(q) = q\n}\nlo$0")).toEqual(expect.arrayContaining(["loss"]));
  });

  it("offers the clauses not yet given, and `expect`, at the start of a loss-body line", () => {
    const labels = checkCompletion("loss a {\n  l1(q) = (1 - q)^2\n  $0\n}\n");
    expect(labels).toEqual(expect.arrayContaining(["l0", "bayes", "weight", "margin", "link", "threshold", "expect", "link = canonical"]));
    expect(labels).not.toContain("l1");
    expect(labels).not.toContain("ln");
  });

  it("works inside a loss block that is not closed yet", () => {
    expect(checkCompletion("loss a {\n  l1(q) = (1 - q)^2\n  l$0")).toContain("l0");
  });

  it("offers the claims after `expect` and `expect strictly`", () => {
    expect(checkCompletion("loss a {\n  l1(q) = q\n  l0(q) = q\n  expect $0\n}\n")).toEqual(
      expect.arrayContaining(["proper", "strictly proper", "improper", "convex", "lambda >=", "exponent >="]),
    );
    expect(checkCompletion("loss a {\n  l1(q) = q\n  l0(q) = q\n  expect strictly $0\n}\n")).toEqual(["proper"]);
  });

  it("offers the names in scope inside a clause: its variable, parameters, helpers, built-ins, constants", () => {
    const src = "param c = 0.2\ndef sq(x) = x * x\nloss focal(g = 2) {\n  l1(q) = -(1 - q)^g * $0\n  l0(q) = q\n}\nloss other(h = 1) {\n  l1(q) = h\n  l0(q) = q\n}\n";
    const labels = checkCompletion(src);
    expect(labels).toEqual(expect.arrayContaining(["q", "g", "c", "sq", "ln", "sigmoid", "pi", "e", "if"]));
    expect(labels).not.toContain("v");
    expect(labels).not.toContain("h");
  });

  it("offers `canonical` after `link =`", () => {
    expect(checkCompletion("loss a {\n  l1(q) = (1 - q)^2\n  l0(q) = q^2\n  link = $0\n}\n")).toEqual(["canonical"]);
  });

  it("offers the score variable in a score clause", () => {
    expect(checkCompletion("loss s {\n  l1(v) = softplus(-$0)\n}\n")).toContain("v");
  });

  it("offers a helper's own parameters in its body, not the clause variables", () => {
    const labels = checkCompletion("def s(u, w) = u * $0\n");
    expect(labels).toEqual(expect.arrayContaining(["u", "w", "exp"]));
    expect(labels).not.toContain("q");
  });

  it("gives built-ins with their signature and a snippet", () => {
    const { text, offset } = cursor("loss a {\n  l1(q) = $0\n}\n");
    const min = service.completions(text, offset).find((c) => c.label === "min");
    expect(min?.detail).toBe("min(a, b)");
    expect(min?.insertText).toBe("min(${1:a}, ${2:b})");
  });

  it("offers nothing inside a comment", () => {
    expect(checkCompletion("# a comment $0\n")).toEqual([]);
  });
});

describe("signature help", () => {
  it("shows a built-in's parameters and the active one", () => {
    const s = checkSignature("loss a {\n  l1(q) = min(q, $0\n}\n");
    expect(s?.label).toBe("min(a, b)");
    expect(s?.activeParameter).toBe(1);
    expect(s!.label.slice(...s!.parameters[1]!.label)).toBe("b");
  });

  it("shows a helper's signature through nested parentheses", () => {
    const s = checkSignature("def f(x, y) = x + y\nloss a {\n  l1(q) = f((1 - q), ln(q)$0\n}\n");
    expect(s?.label).toBe("f(x, y)");
    expect(s?.activeParameter).toBe(1);
    expect(s?.documentation).toContain("def f(x, y) = x + y");
  });

  it("is silent outside a call and on a clause head", () => {
    expect(checkSignature("loss a {\n  l1(q) = 1 - q$0\n}\n")).toBeNull();
    expect(checkSignature("loss a {\n  l1(q$0) = 1 - q\n}\n")).toBeNull();
  });
});
