// The diagnostics scheduler in-process: fast pass at once, engine pass after the debounce, stale work
// abandoned, failures published as internal-error diagnostics. Uses the real language service.
import { describe, expect, it } from "vitest";
import type { Issue } from "../../server/src/issue.js";
import { DiagnosticsScheduler } from "../../server/src/lsp/scheduler.js";
import { createLanguageService, type LanguageService } from "../../server/src/service/language-service.js";

interface Published {
  uri: string;
  version: number;
  pass: "fast" | "full";
  codes: string[];
}

function harness(service: LanguageService = createLanguageService(), debounceMs = 30) {
  const published: Published[] = [];
  const analysed: number[] = [];
  const logs: string[] = [];
  const scheduler = new DiagnosticsScheduler(service, {
    publish: (uri, version, issues: Issue[], pass) => published.push({ uri, version, pass, codes: issues.map((i) => i.code) }),
    analysed: (_uri, version) => analysed.push(version),
    log: (m) => logs.push(m),
  }, debounceMs);
  return { scheduler, published, analysed, logs };
}

const sleep = (ms: number) => new Promise((r) => setTimeout(r, ms));

const LOSS = "loss a {\n  l1(q) = (1 - q)^2\n  l0(q) = q^2\n}\n";

describe("DiagnosticsScheduler", () => {
  it("publishes the fast pass synchronously and the engine pass after the debounce", async () => {
    const h = harness();
    h.scheduler.update("u", 1, LOSS + "loss b {\n  l1(q) = zz\n}\n");
    expect(h.published).toEqual([{ uri: "u", version: 1, pass: "fast", codes: expect.arrayContaining(["unknown-name"]) }]);
    await sleep(300);
    expect(h.published.map((p) => `${p.version}:${p.pass}`)).toEqual(["1:fast", "1:full"]);
    expect(h.analysed).toEqual([1]);
  });

  it("runs the engine once for a burst of versions: only for the last one", async () => {
    const h = harness();
    for (let v = 1; v <= 20; v++) h.scheduler.update("u", v, LOSS.replace("q^2", `q^2 + ${v} * 0`));
    await sleep(400);
    expect(h.published.filter((p) => p.pass === "fast").map((p) => p.version)).toEqual(Array.from({ length: 20 }, (_, i) => i + 1));
    expect(h.published.filter((p) => p.pass === "full").map((p) => p.version)).toEqual([20]);
  });

  it("abandons an engine pass when a newer version arrives while it runs", async () => {
    const service = createLanguageService();
    const h = harness(service, 0);
    // Many distinct losses, so the incremental pass yields between losses several times.
    const many = Array.from({ length: 40 }, (_, i) => `loss l${i}(a = ${i + 1}) {\n  l1(q) = a * (1 - q)^2\n  l0(q) = a * q^2\n}\n`).join("");
    h.scheduler.update("u", 1, many);
    // Let the pass for version 1 start, then supersede it.
    await sleep(5);
    h.scheduler.update("u", 2, many + "# edited\n");
    await sleep(3000);
    const full = h.published.filter((p) => p.pass === "full").map((p) => p.version);
    expect(full[full.length - 1]).toBe(2);
    expect(full).not.toContain(1);
  });

  it("publishes an internal-error diagnostic instead of failing when a pass throws", async () => {
    const broken: LanguageService = {
      ...createLanguageService(),
      analyseFast: () => {
        throw new Error("boom");
      },
      analyseIncrementally: async () => {
        throw new Error("boom later");
      },
    };
    const h = harness(broken);
    h.scheduler.update("u", 1, LOSS);
    await sleep(200);
    expect(h.published.map((p) => `${p.pass}:${p.codes.join(",")}`)).toEqual(["fast:internal-error", "full:internal-error"]);
    expect(h.logs.join("\n")).toMatch(/boom/);
  });

  it("forgets a closed document: no engine pass is published for it", async () => {
    const h = harness();
    h.scheduler.update("u", 1, LOSS);
    h.scheduler.close("u");
    await sleep(200);
    expect(h.published.map((p) => p.pass)).toEqual(["fast"]);
    expect(h.scheduler.versionOf("u")).toBeUndefined();
  });
});
