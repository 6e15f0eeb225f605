/**
 * Settings over a real LSP connection: a client may send anything. Ill-typed or out-of-range values are
 * clamped to the documented range (or replaced by the default) with a log line; the server keeps
 * answering, and a valid change of `propriety.defaultThreshold` re-checks the open documents with it.
 */
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import type { CurvesResult } from "../../server/src/protocol.js";
import { LspTestClient } from "../support/lsp-client.js";

const TEXT = "loss brier {\n  l1(q) = (1 - q)^2\n  l0(q) = q^2\n}\n";

describe("settings sent by the client", () => {
  let client: LspTestClient;
  beforeAll(async () => {
    client = await LspTestClient.start({
      initializationOptions: { settings: { defaultThreshold: 7, analysis: { gridResolution: "lots", deadlineMs: -1 }, format: null, debounceMs: [] } },
    });
  }, 60_000);
  afterAll(async () => {
    await client?.stop();
  });

  it("clamps or replaces each bad value with a log line, and keeps working", async () => {
    const uri = "file:///settings.loss";
    await client.open(uri, TEXT);
    const diags = await client.settledDiagnostics(uri);
    // Brier stays strictly proper; at a threshold this close to 1 the engine may add numerical warnings, never errors.
    expect(diags.filter((d) => d.severity === 1)).toEqual([]);
    const logs = client.logs.join("\n");
    expect(logs).toMatch(/propriety\.defaultThreshold: 7 is outside \(0, 1\); clamped to 0\.999999/);
    expect(logs).toMatch(/propriety\.analysis\.gridResolution: "lots" is not a finite number; using 201/);
    expect(logs).toMatch(/propriety\.analysis\.deadlineMs: -1 is outside \[50, 60000\]; clamped to 50/);
    expect(logs).toMatch(/propriety\.debounceMs: \[\] is not a finite number; using 150/);
    const curves = await client.request<CurvesResult>("propriety/curves", { uri, points: 21, etas: [0.5] });
    expect(curves.losses[0]!.threshold).toBeCloseTo(0.999999, 12);
  });

  it("a pushed configuration change re-checks open documents with the new threshold", async () => {
    const uri = "file:///settings.loss";
    await client.connection.sendNotification("workspace/didChangeConfiguration", { settings: { propriety: { defaultThreshold: 0.2 } } });
    await client.waitFor(() => true);
    // The curves request runs on the pipeline the configuration just replaced.
    const curves = await client.request<CurvesResult>("propriety/curves", { uri, points: 21, etas: [0.5] });
    expect(curves.losses[0]!.threshold).toBe(0.2);
    // Garbage pushed later is survived too (the previous valid value is not kept: absent values take the default).
    await client.connection.sendNotification("workspace/didChangeConfiguration", { settings: { propriety: "nonsense" } });
    const after = await client.request<CurvesResult>("propriety/curves", { uri, points: 21, etas: [0.5] });
    expect(after.losses[0]!.threshold).toBe(0.5);
  });
});
