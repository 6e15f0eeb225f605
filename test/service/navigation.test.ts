// Definition, references and rename on annotated documents (`$0` = cursor). One helper per feature.
import { describe, expect, it } from "vitest";
import { createLanguageService } from "../../server/src/service/language-service.js";
import { applyEdits } from "../../server/src/service/navigation.js";

const service = createLanguageService();

function cursor(src: string): { text: string; offset: number } {
  const i = src.indexOf("$0");
  if (i < 0) throw new Error("fixture without $0");
  return { text: src.slice(0, i) + src.slice(i + 2), offset: i };
}

function checkDefinition(src: string): string[] {
  const { text, offset } = cursor(src);
  return service.definition(text, offset).map((s) => `${s.start}:${text.slice(s.start, s.end)}`);
}

function checkReferences(src: string, includeDeclaration = true): number[] {
  const { text, offset } = cursor(src);
  return service.references(text, offset, includeDeclaration).map((s) => s.start);
}

function checkRename(src: string, newName: string): string {
  const { text, offset } = cursor(src);
  const r = service.rename(text, offset, newName);
  if (!r.ok) return `error: ${r.message}`;
  return applyEdits(text, r.edits);
}

const DOC = [
  "param c = 0.2 in [0.01, 0.99]",
  "def sq(x) = x * x",
  "loss a(g = 2) {",
  "  l1(q) = c * sq(1 - q)^g",
  "  l0(q) = c * sq(q)^g",
  "}",
  "loss b(g = 3) {",
  "  l1(q) = (1 - q)^g",
  "  l0(q) = q^g + c",
  "}",
  "",
].join("\n");

function at(marker: string, nth = 0, shift = 0): string {
  let i = -1;
  for (let k = 0; k <= nth; k++) i = DOC.indexOf(marker, i + 1);
  return DOC.slice(0, i + shift) + "$0" + DOC.slice(i + shift);
}

describe("go to definition", () => {
  it("goes from a use of a global parameter to its declaration", () => {
    expect(checkDefinition(at("c *", 0))).toEqual([`${DOC.indexOf("c =")}:c`]);
  });

  it("goes from a helper call to the helper", () => {
    expect(checkDefinition(at("sq(q)"))).toEqual([`${DOC.indexOf("sq(x)")}:sq`]);
  });

  it("goes from a local parameter to the declaration in its own loss", () => {
    expect(checkDefinition(at("^g", 2, 1))).toEqual([`${DOC.indexOf("g = 3")}:g`]);
  });

  it("has no definition for built-ins or clause variables", () => {
    expect(checkDefinition("loss a {\n  l1(q) = -l$0n(q)\n  l0(q) = q\n}\n")).toEqual([]);
    expect(checkDefinition("loss a {\n  l1(q) = 1 - $0q\n  l0(q) = q\n}\n")).toEqual([]);
  });
});

describe("find references", () => {
  it("finds every use of a global parameter, with or without the declaration", () => {
    const uses = [DOC.indexOf("c *"), DOC.indexOf("c *", DOC.indexOf("c *") + 1), DOC.indexOf("c\n}")];
    expect(checkReferences(at("c ="))).toEqual([DOC.indexOf("c ="), ...uses]);
    expect(checkReferences(at("c ="), false)).toEqual(uses);
  });

  it("keeps same-named local parameters of different losses apart", () => {
    const refs = checkReferences(at("g = 2"));
    expect(refs).toHaveLength(3);
    expect(refs.every((r) => r < DOC.indexOf("loss b"))).toBe(true);
  });
});

describe("rename", () => {
  it("renames a global parameter everywhere", () => {
    const out = checkRename(at("c ="), "cost");
    expect(out).toContain("param cost = 0.2");
    expect(out.match(/\bcost\b/g)).toHaveLength(4);
    expect(out).not.toMatch(/\bc\b/);
  });

  it("renames a helper and its calls", () => {
    const out = checkRename(at("sq(1"), "square");
    expect(out.match(/\bsquare\(/g)).toHaveLength(3);
  });

  it("renames a local parameter only inside its loss", () => {
    const out = checkRename(at("g = 2"), "gamma");
    expect(out).toContain("loss a(gamma = 2)");
    expect(out).toContain("loss b(g = 3)");
    expect(out.match(/\bgamma\b/g)).toHaveLength(3);
  });

  it("renames a helper parameter inside the helper", () => {
    expect(checkRename(at("x * x"), "y")).toContain("def sq(y) = y * y");
  });

  it("refuses keywords, non-identifiers, built-ins, clause variables and collisions", () => {
    expect(checkRename(at("c ="), "loss")).toMatch(/^error: .*keyword/);
    expect(checkRename(at("c ="), "2x")).toMatch(/^error: .*not a valid name/);
    expect(checkRename(at("c ="), "ln")).toMatch(/^error: .*built-in/);
    expect(checkRename(at("c ="), "q")).toMatch(/^error: .*clause variable/);
    expect(checkRename(at("c ="), "sq")).toMatch(/^error: .*already used/);
    expect(checkRename(at("g = 2"), "c")).toMatch(/^error: .*already used/);
  });

  it("prepares a rename only on renamable names", () => {
    const { text, offset } = cursor(at("sq(q)"));
    expect(service.prepareRename(text, offset)?.placeholder).toBe("sq");
    const b = cursor("loss a {\n  l1(q) = -l$0n(q)\n  l0(q) = q\n}\n");
    expect(service.prepareRename(b.text, b.offset)).toBeNull();
  });
});
