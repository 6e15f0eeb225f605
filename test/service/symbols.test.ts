// Document symbols, folding ranges, semantic tokens and code lenses of one document.
import { describe, expect, it } from "vitest";
import { createLanguageService } from "../../server/src/service/language-service.js";

const service = createLanguageService();

const DOC = [
  "# A global cost.",
  "# Second line of its documentation.",
  "param c = 0.2 in [0.01, 0.99]",
  "def sq(x) = x * x",
  "loss focal(g = 2 in [0, 5]) {",
  "  l1(q) = -(1 - q)^g * ln(q)",
  "  l0(q) = -q^g * ln(1 - q)",
  "  link(q) = logit(q)",
  "  expect strictly proper",
  "}",
  "",
].join("\n");

function checkSymbols(text: string): unknown {
  const strip = (s: { name: string; kind: string; children: unknown[] }): unknown => ({ name: s.name, kind: s.kind, children: (s.children as typeof s[]).map(strip) });
  return service.documentSymbols(text).map(strip);
}

describe("document symbols", () => {
  it("outlines losses with parameters, clauses and claims as children", () => {
    expect(checkSymbols(DOC)).toEqual([
      { name: "c", kind: "param", children: [] },
      { name: "sq", kind: "def", children: [] },
      {
        name: "focal", kind: "loss", children: [
          { name: "g", kind: "param", children: [] },
          { name: "l1(q)", kind: "clause", children: [] },
          { name: "l0(q)", kind: "clause", children: [] },
          { name: "link(q)", kind: "clause", children: [] },
          { name: "expect strictly proper", kind: "expect", children: [] },
        ],
      },
    ]);
  });

  it("selects the name inside the item's span", () => {
    const loss = service.documentSymbols(DOC)[2]!;
    expect(DOC.slice(loss.selectionSpan.start, loss.selectionSpan.end)).toBe("focal");
    expect(DOC.slice(loss.span.start, loss.span.end)).toMatch(/^loss focal[\s\S]*\}$/);
  });

  it("survives a half-typed document", () => {
    const names = (service.documentSymbols("loss a {\n  l1(q) = (1 - \nloss b {\n  bayes(q) = q * (1 - q)\n}\n") as { name: string }[]).map((s) => s.name);
    expect(names).toEqual(["a", "b"]);
  });
});

describe("folding ranges", () => {
  it("folds the loss block and the comment block", () => {
    const ranges = service.foldingRanges(DOC).map((f) => `${f.kind}:${DOC.slice(f.span.start, f.span.end).split("\n")[0]}`);
    expect(ranges).toEqual(["comment:# A global cost.", "region:loss focal(g = 2 in [0, 5]) {"]);
  });
});

describe("semantic tokens", () => {
  it("classifies names by what they resolve to", () => {
    const tokens = service.semanticTokens(DOC).map((t) => `${DOC.slice(t.span.start, t.span.end)}:${t.type}${t.modifiers.length ? "." + t.modifiers.join(".") : ""}`);
    expect(tokens).toEqual(expect.arrayContaining([
      "c:variable.declaration.readonly", "sq:function.declaration", "x:parameter.declaration", "focal:class.declaration",
      "g:parameter.declaration", "l1:property.declaration", "ln:function.defaultLibrary", "logit:function.defaultLibrary",
      "strictly:keyword", "proper:keyword",
    ]));
    const starts = service.semanticTokens(DOC).map((t) => t.span.start);
    expect([...starts].sort((a, b) => a - b)).toEqual(starts);
  });
});

describe("code lenses", () => {
  it("puts one lens on each loss name with the engine's summary line", () => {
    service.analyseFull(DOC);
    const lenses = service.codeLenses(DOC);
    expect(lenses).toHaveLength(1);
    expect(DOC.slice(lenses[0]!.span.start, lenses[0]!.span.end)).toBe("focal");
    expect(lenses[0]!.title.length).toBeGreaterThan(0);
    expect(lenses[0]!.title).not.toMatch(/NaN|undefined/);
  });

  it("says when a loss is not analysed because of errors", () => {
    const text = "loss half {\n  l1(q) = -ln(q)\n}\n";
    expect(service.codeLenses(text)[0]!.title).toBe("not analysed: the loss has errors");
  });
});
