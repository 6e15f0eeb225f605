/**
 * The settings are defined once (server/src/settings.ts): package.json's `contributes.configuration`
 * must say the same, and whatever a client sends is normalised — clamped to the documented range or
 * replaced by the default, with a log line — never a crash or a silent different value.
 */
import { readFileSync } from "node:fs";
import { describe, expect, it } from "vitest";
import { DEFAULT_SETTINGS, normaliseSettings, SETTINGS, toClientShape, type SettingSpec } from "../server/src/settings.js";

const pkg = JSON.parse(readFileSync("package.json", "utf8")) as { contributes: { configuration: { properties: Record<string, Record<string, unknown>> } } };
const contributed = pkg.contributes.configuration.properties;

/** The package.json (JSON Schema) form of one setting of the table. */
function schemaOf(s: SettingSpec): Record<string, unknown> {
  const out: Record<string, unknown> = { type: s.type };
  if (s.enum) out["enum"] = [...s.enum];
  out["default"] = s.default;
  if (s.minimum !== undefined) out[s.exclusive ? "exclusiveMinimum" : "minimum"] = s.minimum;
  if (s.maximum !== undefined) out[s.exclusive ? "exclusiveMaximum" : "maximum"] = s.maximum;
  if (s.scope) out["scope"] = s.scope;
  out["description"] = s.description;
  return out;
}

describe("settings table and package.json", () => {
  it("contribute exactly the table's keys", () => {
    expect(Object.keys(contributed).sort()).toEqual(SETTINGS.map((s) => `propriety.${s.key}`).sort());
  });
  it.each(SETTINGS.map((s) => [s.key, s] as const))("propriety.%s has the table's type, default, range and description", (key, spec) => {
    expect(contributed[`propriety.${key}`]).toEqual(schemaOf(spec));
  });
});

describe("normaliseSettings", () => {
  it("gives the defaults for nothing, and keeps valid values", () => {
    expect(normaliseSettings(undefined)).toEqual(DEFAULT_SETTINGS);
    const valid = { analysis: { gridResolution: 401, deadlineMs: 500 }, defaultThreshold: 0.2, maxAnalysedLosses: 3, debounceMs: 0, format: { indent: 4 } };
    const log: string[] = [];
    expect(normaliseSettings(valid, (m) => log.push(m))).toEqual({ gridResolution: 401, deadlineMs: 500, defaultThreshold: 0.2, maxAnalysedLosses: 3, debounceMs: 0, indent: 4 });
    expect(log).toEqual([]);
  });

  it("round-trips through the client's nested shape", () => {
    const s = { ...DEFAULT_SETTINGS, defaultThreshold: 0.2, gridResolution: 401 };
    expect(normaliseSettings(toClientShape(s))).toEqual(s);
  });

  // Each row: what a client sent, the field it lands in, the value used, and a word the log line must contain.
  const rows: [string, unknown, keyof typeof DEFAULT_SETTINGS, number, RegExp][] = [
    ["threshold 0 is outside (0, 1)", { defaultThreshold: 0 }, "defaultThreshold", 1e-6, /clamped/],
    ["threshold 1 is outside (0, 1)", { defaultThreshold: 1 }, "defaultThreshold", 1 - 1e-6, /clamped/],
    ["threshold as a string", { defaultThreshold: "0.2" }, "defaultThreshold", 0.5, /not a finite number/],
    ["threshold NaN", { defaultThreshold: Number.NaN }, "defaultThreshold", 0.5, /not a finite number/],
    ["grid below its minimum", { analysis: { gridResolution: 3 } }, "gridResolution", 11, /clamped/],
    ["grid above its maximum", { analysis: { gridResolution: 1e9 } }, "gridResolution", 5001, /clamped/],
    ["grid not an integer", { analysis: { gridResolution: 300.6 } }, "gridResolution", 301, /not an integer/],
    ["deadline negative", { analysis: { deadlineMs: -5 } }, "deadlineMs", 50, /clamped/],
    ["deadline as an object", { analysis: { deadlineMs: { x: 1 } } }, "deadlineMs", 2000, /not a finite number/],
    ["analysis as a number", { analysis: 7 }, "gridResolution", 201, /^$/],
    ["debounce Infinity", { debounceMs: Infinity }, "debounceMs", 150, /not a finite number/],
    ["indent 0", { format: { indent: 0 } }, "indent", 1, /clamped/],
    ["maxAnalysedLosses true", { maxAnalysedLosses: true }, "maxAnalysedLosses", 200, /not a finite number/],
  ];
  it.each(rows)("%s", (_, raw, field, value, logged) => {
    const log: string[] = [];
    const s = normaliseSettings(raw, (m) => log.push(m));
    expect(s[field]).toBeCloseTo(value, 12);
    expect(log.join("\n")).toMatch(logged);
    if (logged.source !== "^$") expect(log).toHaveLength(1);
  });

  it("never throws on arbitrary input", () => {
    for (const raw of [null, 0, "x", [], [1, 2], { analysis: null }, { format: [] }, Object.create(null), { ["__proto__"]: { defaultThreshold: 0.3 } }]) {
      expect(() => normaliseSettings(raw, () => undefined)).not.toThrow();
    }
  });
});

describe("the pipeline's settings", () => {
  it("takes the flat settings it is given, and clamps them with a log line on configure", async () => {
    const { createPipeline } = await import("../server/src/pipeline/pipeline.js");
    const p = createPipeline({ gridResolution: 401, defaultThreshold: 0.2 });
    expect(p.settings.gridResolution).toBe(401);
    expect(p.settings.defaultThreshold).toBe(0.2);
    const log: string[] = [];
    p.configure({ gridResolution: 7 }, (m) => log.push(m));
    expect(p.settings.gridResolution).toBe(11);
    // Settings not named keep their values.
    expect(p.settings.defaultThreshold).toBe(0.2);
    expect(log).toEqual([expect.stringMatching(/gridResolution: 7 is outside \[11, 5001\]; clamped to 11/)]);
  });
});
