// The live run page: the security policy (strict CSP with a per-render nonce, local resources only) and the one
// HTML document the panel sets, with the scheme's URI and name in escaped data attributes. The policy is decided by
// `liveRunPolicy`; `liveRunHtml` only applies it. Pure apart from node:crypto; must not import vscode.

import { randomBytes } from 'node:crypto';

/** A fresh nonce from a cryptographic source, for one render. */
export function makeNonce(): string {
  return randomBytes(18).toString('base64');
}

/** Escapes text for an HTML attribute value in double quotes (and for text content). */
export function escapeHtml(text: string): string {
  return text.replace(/[&<>"']/g, (c) => ({ '&': '&amp;', '<': '&lt;', '>': '&gt;', '"': '&quot;', "'": '&#39;' })[c] as string);
}

/**
 * Nothing by default; scripts only with the nonce; styles, images and fonts only from the extension's own
 * resources (plus blob:/data: images); no connections, frames, forms, workers or eval.
 */
export function liveRunPolicy(cspSource: string, nonce: string): string {
  return [
    "default-src 'none'",
    `script-src 'nonce-${nonce}'`,
    `style-src ${cspSource}`,
    `img-src ${cspSource} blob: data:`,
    `font-src ${cspSource}`,
    "form-action 'none'",
    "base-uri 'none'",
  ].join('; ');
}

export interface PageOptions {
  readonly cspSource: string;
  readonly nonce: string;
  readonly scriptUri: string;
  readonly styleUri: string;
  readonly source: string;
  readonly fileName: string;
}

export function liveRunHtml(o: PageOptions): string {
  return `<!DOCTYPE html>
<html lang="en">
<head>
<meta charset="utf-8">
<meta http-equiv="Content-Security-Policy" content="${escapeHtml(liveRunPolicy(o.cspSource, o.nonce))}">
<meta name="viewport" content="width=device-width, initial-scale=1">
<title>Fluxel · ${escapeHtml(o.fileName)}</title>
<link rel="stylesheet" href="${escapeHtml(o.styleUri)}">
</head>
<body data-source="${escapeHtml(o.source)}" data-file-name="${escapeHtml(o.fileName)}">
<noscript>The live run needs scripts.</noscript>
<script nonce="${escapeHtml(o.nonce)}" src="${escapeHtml(o.scriptUri)}"></script>
</body>
</html>
`;
}
