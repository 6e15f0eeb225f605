/**
 * The curve viewer's HTML shell: a strict Content-Security-Policy (nothing but the nonce'd script and
 * the stylesheet from the webview's resource root), the stylesheet, an empty `#app` and the script.
 * Kept free of `vscode` imports so the Chromium tests can serve exactly this page.
 */

export interface ViewerHtmlParts {
  /** `webview.cspSource` (or the test server's origin). */
  cspSource: string;
  nonce: string;
  /** URI of dist/viewer.js as the webview sees it. */
  scriptUri: string;
  /** URI of dist/viewer.css as the webview sees it. */
  styleUri: string;
  title?: string;
}

function escapeAttr(s: string): string {
  return s.replace(/[&<>"']/g, (c) => ({ "&": "&amp;", "<": "&lt;", ">": "&gt;", '"': "&quot;", "'": "&#39;" })[c]!);
}

/** The Content-Security-Policy of the viewer page. */
export function viewerCsp(cspSource: string, nonce: string): string {
  return `default-src 'none'; img-src ${cspSource} data:; style-src ${cspSource}; font-src ${cspSource}; script-src 'nonce-${nonce}'; base-uri 'none'; form-action 'none'`;
}

/** The viewer page's HTML. */
export function viewerHtml(p: ViewerHtmlParts): string {
  return `<!DOCTYPE html>
<html lang="en">
<head>
<meta charset="utf-8">
<meta http-equiv="Content-Security-Policy" content="${escapeAttr(viewerCsp(p.cspSource, p.nonce))}">
<meta name="viewport" content="width=device-width, initial-scale=1">
<link rel="stylesheet" href="${escapeAttr(p.styleUri)}">
<title>${escapeAttr(p.title ?? "Curves")}</title>
</head>
<body>
<div id="app"></div>
<script nonce="${escapeAttr(p.nonce)}" src="${escapeAttr(p.scriptUri)}"></script>
</body>
</html>
`;
}

/** A random nonce (32 characters from [A-Za-z0-9]), from the platform's CSPRNG. */
export function makeNonce(random: (bytes: Uint8Array) => Uint8Array = (b) => crypto.getRandomValues(b)): string {
  const alphabet = "ABCDEFGHIJKLMNOPQRSTUVWXYZabcdefghijklmnopqrstuvwxyz0123456789";
  const bytes = random(new Uint8Array(32));
  let s = "";
  for (const b of bytes) s += alphabet[b % alphabet.length];
  return s;
}
