/**
 * The content security policy of every page of the screens, in the browser host (a header) and
 * in Electron (a header on our app scheme): everything from the page's own origin only, no
 * plug-ins, no framing, no inline or remote scripts. Inline styles stay allowed because the
 * chart library positions its tooltips with style attributes.
 */
export const contentSecurityPolicy = [
  "default-src 'self'",
  "script-src 'self'",
  "style-src 'self' 'unsafe-inline'",
  "img-src 'self' data: blob:",
  "font-src 'self'",
  "connect-src 'self'",
  "object-src 'none'",
  "base-uri 'none'",
  "frame-ancestors 'none'",
  "form-action 'none'",
].join('; ');
