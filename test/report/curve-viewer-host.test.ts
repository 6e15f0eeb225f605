/**
 * The panel host (client/src/curve-viewer.ts) against a stand-in `vscode` module: the HTML it gives the
 * webview, slider messages turned into CURVES_REQUEST overrides, coalescing of requests during a drag,
 * and the serializer restoring a panel from the page's state.
 */
import { beforeEach, describe, expect, it, vi } from "vitest";

interface FakePanel {
  title: string;
  webview: {
    options: unknown;
    html: string;
    cspSource: string;
    posted: unknown[];
    postMessage(m: unknown): Promise<boolean>;
    asWebviewUri(u: { path: string }): { toString(): string };
    onDidReceiveMessage(cb: (m: unknown) => void): { dispose(): void };
    receive?: (m: unknown) => void;
  };
  onDidDispose(cb: () => void): { dispose(): void };
  disposeCallbacks: (() => void)[];
  reveal(): void;
  dispose(): void;
  disposed: boolean;
}

const created: FakePanel[] = [];
const serializers = new Map<string, { deserializeWebviewPanel(panel: FakePanel, state: unknown): Promise<void> }>();

function makePanel(title: string): FakePanel {
  const panel: FakePanel = {
    title,
    disposeCallbacks: [],
    disposed: false,
    webview: {
      options: null,
      html: "",
      cspSource: "https://webview.test",
      posted: [],
      async postMessage(m) {
        this.posted.push(m);
        return true;
      },
      asWebviewUri: (u) => ({ toString: () => `https://webview.test${u.path}` }),
      onDidReceiveMessage(cb) {
        panel.webview.receive = cb;
        return { dispose() {} };
      },
    },
    onDidDispose(cb) {
      panel.disposeCallbacks.push(cb);
      return { dispose() {} };
    },
    reveal() {},
    dispose() {
      if (panel.disposed) return;
      panel.disposed = true;
      for (const cb of panel.disposeCallbacks) cb();
    },
  };
  return panel;
}

vi.mock("vscode", () => ({
  Uri: { joinPath: (base: { path: string }, ...parts: string[]) => ({ path: [base.path, ...parts].join("/") }) },
  ViewColumn: { Beside: -2 },
  window: {
    createWebviewPanel: (_type: string, title: string) => {
      const p = makePanel(title);
      created.push(p);
      return p;
    },
    registerWebviewPanelSerializer: (type: string, s: { deserializeWebviewPanel(panel: FakePanel, state: unknown): Promise<void> }) => {
      serializers.set(type, s);
      return { dispose() {} };
    },
  },
  workspace: { onDidChangeTextDocument: () => ({ dispose() {} }) },
}));

const { openCurveViewer, registerCurveViewer, CURVE_VIEWER_TYPE } = await import("../../client/src/curve-viewer.js");

/** A language client whose requests resolve when the test says so. */
function makeClient() {
  const calls: { method: string; params: { uri: string; overrides?: Record<string, Record<string, number>>; points?: number }; resolve: (v: unknown) => void }[] = [];
  return {
    calls,
    sendRequest: (method: string, params: (typeof calls)[number]["params"]) => new Promise((resolve) => calls.push({ method, params, resolve })),
  };
}

const context = { extensionUri: { path: "/ext" }, subscriptions: [] as { dispose(): void }[] };
const result = (uri: string) => ({ uri, version: 1, losses: [], skipped: [] });
const flush = () => new Promise((r) => setTimeout(r, 0));

beforeEach(() => {
  created.length = 0;
});

describe("curve viewer host", () => {
  it("builds a strict-CSP page loading only dist/viewer.js and dist/viewer.css", () => {
    const client = makeClient();
    openCurveViewer(context as never, client as never, "file:///a.loss", "focal");
    const p = created[0]!;
    expect(p.title).toBe("Curves: focal (a.loss)");
    expect(p.webview.options).toEqual({ enableScripts: true, localResourceRoots: [{ path: "/ext/dist" }] });
    const html = p.webview.html.replace(/&#39;/g, "'");
    const nonce = html.match(/script-src 'nonce-([A-Za-z0-9]{32})'/)?.[1];
    expect(nonce).toBeDefined();
    expect(p.webview.html).toContain(`<script nonce="${nonce}" src="https://webview.test/ext/dist/viewer.js">`);
    expect(p.webview.html).toContain(`href="https://webview.test/ext/dist/viewer.css"`);
    expect(html).toContain("default-src 'none'");
    expect(html).not.toContain("unsafe");
    p.dispose();
  });

  it("turns slider messages into overrides and coalesces requests while one is in flight", async () => {
    const client = makeClient();
    openCurveViewer(context as never, client as never, "file:///b.loss");
    const p = created[0]!;
    p.webview.receive!({ type: "ready" });
    expect(client.calls).toHaveLength(1);
    // Five slider positions arrive while the first request runs: one more request, with the last value.
    for (let i = 1; i <= 5; i++) p.webview.receive!({ type: "setParam", loss: "focal", name: "g", value: i, seq: i });
    expect(client.calls).toHaveLength(1);
    client.calls[0]!.resolve(result("file:///b.loss"));
    await flush();
    expect(client.calls).toHaveLength(2);
    expect(client.calls[1]!.method).toBe("propriety/curves");
    expect(client.calls[1]!.params.overrides).toEqual({ focal: { g: 5 } });
    expect(client.calls[1]!.params.points).toBe(61);
    client.calls[1]!.resolve(result("file:///b.loss"));
    await flush();
    expect(p.webview.posted).toEqual([
      { type: "curves", data: result("file:///b.loss"), eta: 0.7, seq: 0, focus: undefined },
      { type: "curves", data: result("file:///b.loss"), eta: 0.7, seq: 5, focus: undefined },
    ]);
    p.dispose();
  });

  it("posts an error message when the request fails", async () => {
    const client = { sendRequest: () => Promise.reject(new Error("server gone")) };
    openCurveViewer(context as never, client as never, "file:///c.loss");
    const p = created[0]!;
    p.webview.receive!({ type: "ready" });
    await flush();
    expect(p.webview.posted).toEqual([{ type: "error", message: "The curves could not be computed: server gone" }]);
    p.dispose();
  });

  it("restores a panel from the page state, and closes one without a document", async () => {
    const client = makeClient();
    registerCurveViewer(context as never, client as never);
    const s = serializers.get(CURVE_VIEWER_TYPE)!;
    const restored = makePanel("old");
    await s.deserializeWebviewPanel(restored, { version: 1, eta: 0.3, hidden: [], uri: "file:///d.loss" });
    expect(restored.webview.html).toContain("viewer.js");
    restored.webview.receive!({ type: "ready" });
    expect(client.calls[0]!.params.uri).toBe("file:///d.loss");
    const empty = makePanel("old");
    await s.deserializeWebviewPanel(empty, undefined);
    expect(empty.disposed).toBe(true);
    restored.dispose();
  });
});
