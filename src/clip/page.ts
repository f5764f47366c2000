/**
 * A clip page: one HTML file that opens anywhere, offline. It carries the viewer's code and styles
 * and the clip's step file (base64) inline, and a content policy that forbids every network request,
 * so opening it can fetch nothing. Text from the file (the title) is escaped here; the viewer shows
 * notes and names as text, never as markup.
 */

export interface ClipPageParts {
  title: string;
  /** The clip step file's name, shown in the viewer. */
  name: string;
  clip: Uint8Array;
  /** The clip viewer's bundle (an ES module) and its styles. */
  appJs: string;
  appCss: string;
}

export function escapeHtml(text: string): string {
  return text.replace(/[&<>"']/g, (c) => ({ '&': '&amp;', '<': '&lt;', '>': '&gt;', '"': '&quot;', "'": '&#39;' })[c]!);
}

export function base64(bytes: Uint8Array): string {
  let s = '';
  for (let i = 0; i < bytes.length; i += 0x8000) s += String.fromCharCode(...bytes.subarray(i, i + 0x8000));
  return btoa(s);
}

/** Everything a browser may load for this page is already in it. */
export const CLIP_PAGE_POLICY = "default-src 'none'; script-src 'unsafe-inline'; style-src 'unsafe-inline'; img-src data: blob:; worker-src blob:";

export function clipPageHtml(p: ClipPageParts): string {
  // An inline script or style ends at the first "</script" or "</style", whatever the JS means by it.
  const js = p.appJs.replace(/<\/(script)/gi, '<\\/$1');
  const css = p.appCss.replace(/<\/(style)/gi, '<\\/$1');
  return [
    '<!doctype html>',
    '<html lang="en">',
    '<head>',
    '<meta charset="utf-8" />',
    '<meta name="viewport" content="width=device-width, initial-scale=1" />',
    `<meta http-equiv="Content-Security-Policy" content="${CLIP_PAGE_POLICY}" />`,
    `<title>${escapeHtml(p.title || p.name)} · episcope clip</title>`,
    '<link rel="icon" href="data:," />',
    `<style id="episcope-style">${css}</style>`,
    '</head>',
    '<body>',
    '<div id="app"></div>',
    `<script type="application/octet-stream" id="episcope-clip" data-name="${escapeHtml(p.name)}">${base64(p.clip)}</script>`,
    `<script type="module" id="episcope-app">${js}</script>`,
    '</body>',
    '</html>',
    '',
  ].join('\n');
}
