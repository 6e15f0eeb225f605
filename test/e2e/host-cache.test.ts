/**
 * The e2e host's cache (scripts/e2e/host.mjs): a finished install is reused only while its stamp
 * names this code-server version, this Node major and this platform, and its entry point exists;
 * anything else — no folder, a half-finished install, an unreadable or foreign stamp — is a reason to
 * rebuild, stated in words. Runs without installing anything.
 */
import * as fs from "node:fs";
import * as os from "node:os";
import * as path from "node:path";
import { afterAll, describe, expect, it } from "vitest";
// @ts-expect-error: a plain .mjs script without type declarations
import { CODE_SERVER_VERSION, codeServerBin, staleReason } from "../../scripts/e2e/host.mjs";

const root = fs.mkdtempSync(path.join(os.tmpdir(), "propriety-host-"));
afterAll(() => fs.rmSync(root, { recursive: true, force: true }));

function host(name: string, stamp: unknown, entry = true): string {
  const dir = path.join(root, name);
  fs.mkdirSync(dir, { recursive: true });
  if (stamp !== undefined) fs.writeFileSync(path.join(dir, "propriety-e2e-stamp.json"), typeof stamp === "string" ? stamp : JSON.stringify(stamp));
  if (entry) {
    fs.mkdirSync(path.dirname(codeServerBin(dir)), { recursive: true });
    fs.writeFileSync(codeServerBin(dir), "");
  }
  return dir;
}
const good = { codeServer: CODE_SERVER_VERSION, nodeMajor: process.versions.node.split(".")[0], platform: `${process.platform}-${process.arch}` };

describe("e2e host cache", () => {
  it.each([
    ["not installed", () => path.join(root, "absent"), /not installed/],
    ["an interrupted install (no stamp)", () => host("half", undefined), /no install stamp/],
    ["an unreadable stamp", () => host("garbled", "{not json"), /unreadable install stamp/],
    ["another code-server version", () => host("old", { ...good, codeServer: "4.99.0" }), /codeServer=4\.99\.0, wanted/],
    ["another Node major", () => host("node", { ...good, nodeMajor: "18" }), /nodeMajor=18/],
    ["a missing entry point", () => host("noentry", good, false), /entry point missing/],
  ])("rebuilds for %s", (_n, dir, why) => {
    expect(staleReason(dir())).toMatch(why);
  });

  it("reuses a finished install of this version", () => {
    expect(staleReason(host("fine", good))).toBeNull();
  });
});
