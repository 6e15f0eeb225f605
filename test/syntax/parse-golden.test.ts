/**
 * Golden parser tests: every `test/fixtures/parse/ok/*.loss` parses with no issue and every
 * `err/*.loss` with at least one, and each dump (tree, spans, issues) matches its `.tree.txt`.
 * `UPDATE_GOLDEN=1 npx vitest run test/syntax` rewrites the `.tree.txt` files; review them by eye.
 */
import { existsSync, readdirSync, readFileSync, writeFileSync } from "node:fs";
import { join } from "node:path";
import { describe, expect, it } from "vitest";
import { parse } from "../../server/src/syntax/parse.js";
import { dumpTree } from "../support/tree-dump.js";

const FIXTURES = join(import.meta.dirname, "..", "fixtures", "parse");
const UPDATE = process.env["UPDATE_GOLDEN"] === "1";

function fixtures(kind: "ok" | "err"): string[] {
  return readdirSync(join(FIXTURES, kind)).filter((f) => f.endsWith(".loss")).sort();
}

function checkGolden(kind: "ok" | "err", file: string): { issues: number } {
  const path = join(FIXTURES, kind, file);
  const text = readFileSync(path, "utf8");
  const { ast, issues } = parse(text);
  const dump = dumpTree(ast, issues);
  const goldenPath = path.replace(/\.loss$/, ".tree.txt");
  if (UPDATE || !existsSync(goldenPath)) {
    if (!UPDATE) throw new Error(`missing golden file ${goldenPath}; run with UPDATE_GOLDEN=1 and review it`);
    writeFileSync(goldenPath, dump);
  }
  expect(dump).toBe(readFileSync(goldenPath, "utf8"));
  return { issues: issues.length };
}

describe("golden parses: ok fixtures", () => {
  const files = fixtures("ok");
  it("has fixtures", () => {
    expect(files.length).toBeGreaterThanOrEqual(12);
  });
  it.each(files)("%s parses with no issue and matches its tree", (file) => {
    expect(checkGolden("ok", file).issues).toBe(0);
  });
});

describe("golden parses: err fixtures", () => {
  const files = fixtures("err");
  it("has fixtures", () => {
    expect(files.length).toBeGreaterThanOrEqual(12);
  });
  it.each(files)("%s reports an issue and matches its tree", (file) => {
    expect(checkGolden("err", file).issues).toBeGreaterThanOrEqual(1);
  });
});
