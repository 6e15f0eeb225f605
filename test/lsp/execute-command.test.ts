/**
 * Code lenses in any LSP editor: the server provides `propriety.showLossSummary` (workspace/executeCommand),
 * which answers the loss summary and shows it with window/showMessage. A client that names itself
 * (clientInfo, as Neovim does) without declaring the VS Code viewer command gets lenses that run it; the
 * VS Code extension declares `propriety.openCurveViewer` in initializationOptions.clientCommands and
 * keeps lenses that open the curve viewer.
 */
import { spawn, type ChildProcess } from "node:child_process";
import { afterAll, describe, expect, it } from "vitest";
import { createMessageConnection, StreamMessageReader, StreamMessageWriter, type MessageConnection } from "vscode-jsonrpc/node";
import { ensureServerBuilt } from "../support/lsp-client.js";

/** The Brier score (Brier 1950), strictly proper; log loss with its y = 0 branch doubled, improper (the stationarity condition of Reid & Williamson 2010, Thm 1 fails by a factor 2). */
const TEXT = "loss brier {\n  l1(q) = (1 - q)^2\n  l0(q) = q^2\n}\n\nloss tilted {\n  l1(q) = -ln(q)\n  l0(q) = -2*ln(1 - q)\n}\n";
const URI = "file:///lens-command.loss";

interface Session { proc: ChildProcess; conn: MessageConnection; messages: { type: number; message: string }[]; commands: string[] }
const sessions: Session[] = [];

async function session(init: { clientInfo?: { name: string }; initializationOptions?: unknown }): Promise<Session> {
  const proc = spawn(process.execPath, [await ensureServerBuilt(), "--stdio"], { stdio: ["pipe", "pipe", "pipe"] });
  const conn = createMessageConnection(new StreamMessageReader(proc.stdout!), new StreamMessageWriter(proc.stdin!));
  const s: Session = { proc, conn, messages: [], commands: [] };
  conn.onNotification("window/showMessage", (p: { type: number; message: string }) => void s.messages.push(p));
  let analysed: () => void = () => undefined;
  const done = new Promise<void>((r) => (analysed = r));
  conn.onNotification("propriety/analysed", () => analysed());
  conn.onRequest("client/registerCapability", () => null);
  conn.listen();
  const result = await conn.sendRequest<{ capabilities: { executeCommandProvider?: { commands: string[] } } }>("initialize", {
    processId: process.pid, rootUri: null, capabilities: {}, ...init,
  });
  s.commands = result.capabilities.executeCommandProvider?.commands ?? [];
  await conn.sendNotification("initialized", {});
  await conn.sendNotification("textDocument/didOpen", { textDocument: { uri: URI, languageId: "loss", version: 1, text: TEXT } });
  await done;
  sessions.push(s);
  return s;
}

afterAll(() => {
  for (const s of sessions) {
    s.conn.dispose();
    s.proc.kill();
  }
});

type Lens = { command: { title: string; command: string; arguments: unknown[] } };

describe("workspace/executeCommand propriety.showLossSummary", () => {
  it("is announced, and lenses run it in an editor that names itself (Neovim)", async () => {
    const s = await session({ clientInfo: { name: "Neovim" } });
    expect(s.commands).toEqual(["propriety.showLossSummary"]);
    const lenses = await s.conn.sendRequest<Lens[]>("textDocument/codeLens", { textDocument: { uri: URI } });
    expect(lenses.map((l) => l.command.command)).toEqual(["propriety.showLossSummary", "propriety.showLossSummary"]);
    expect(lenses.map((l) => l.command.arguments)).toEqual([[URI, "brier"], [URI, "tilted"]]);

    const summary = await s.conn.sendRequest<{ loss: string; verdict: string; text: string }>("workspace/executeCommand", lenses[0]!.command);
    expect(summary.loss).toBe("brier");
    expect(summary.verdict).toBe("strictly-proper");
    await expect.poll(() => s.messages.length).toBe(1);
    expect(s.messages[0]!.type).toBe(3); // MessageType.Info
    // λ = inf w = 2: the Brier score's Bayes risk is H(η) = η(1 − η), so w = −H'' = 2 (Reid & Williamson 2010, weight representation; worked by hand).
    expect(s.messages[0]!.message).toMatch(/^brier: strictly proper · λ = 2 · δ ≈ 0\.25·ε² · exponents ½ \/ ½$/);

    const improper = await s.conn.sendRequest<{ verdict: string }>("workspace/executeCommand", lenses[1]!.command);
    expect(improper.verdict).toBe("improper");
    await expect.poll(() => s.messages.length).toBe(2);
    expect(s.messages[1]!.message).toMatch(/^tilted: improper/);
  });

  it("refuses an unknown loss or an unopened document with an error, not silence", async () => {
    const s = await session({ clientInfo: { name: "Neovim" } });
    await expect(s.conn.sendRequest("workspace/executeCommand", { command: "propriety.showLossSummary", arguments: [URI, "nope"] })).rejects.toThrow(/no loss named 'nope'/);
    await expect(s.conn.sendRequest("workspace/executeCommand", { command: "propriety.showLossSummary", arguments: ["file:///closed.loss", "brier"] })).rejects.toThrow(/not open/);
  });

  it("keeps the curve-viewer command for the VS Code extension, which declares it", async () => {
    const s = await session({ clientInfo: { name: "Visual Studio Code" }, initializationOptions: { clientCommands: ["propriety.openCurveViewer"] } });
    const lenses = await s.conn.sendRequest<Lens[]>("textDocument/codeLens", { textDocument: { uri: URI } });
    expect(lenses.map((l) => l.command.command)).toEqual(["propriety.openCurveViewer", "propriety.openCurveViewer"]);
  });

});

describe("propriety/generate lists the improper losses for the editor's consent", () => {
  it("marks a loss that says `expect improper` as consented and one that does not as needing consent", async () => {
    const s = await session({ clientInfo: { name: "Neovim" } });
    const uri = "file:///consent.loss";
    const text = `${TEXT}\nloss focal(g = 2 in [0, 5]) {\n  l1(q) = -(1 - q)^g * ln(q)\n  l0(q) = -q^g * ln(1 - q)\n  expect improper\n}\n`;
    await s.conn.sendNotification("textDocument/didOpen", { textDocument: { uri, languageId: "loss", version: 1, text } });
    type Gen = { ok: boolean; code: string | null; improper: { loss: string; expected: boolean }[] };
    const plain = await s.conn.sendRequest<Gen>("propriety/generate", { uri, target: "numpy" });
    expect(plain.ok).toBe(true);
    expect(plain.improper).toEqual([{ loss: "tilted", expected: false }, { loss: "focal", expected: true }]);
    expect(plain.code).not.toMatch(/^def tilted\(/m);
    const allowed = await s.conn.sendRequest<Gen>("propriety/generate", { uri, target: "numpy", allowImproper: true });
    expect(allowed.code).toMatch(/^def tilted\(/m);
    expect(allowed.code).toMatch(/^def focal\(/m);
    const one = await s.conn.sendRequest<Gen>("propriety/generate", { uri, target: "numpy", loss: "brier" });
    expect(one.improper).toEqual([]);
  });
});
