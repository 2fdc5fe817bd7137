/**
 * The one Content-Security-Policy of the app, used for the <meta> tag of the
 * built page and for the response headers of the test server. Scripts and
 * styles only from the app's own origin, no eval; 'wasm-unsafe-eval' only so
 * the LAZ decoder's WebAssembly can compile; no network beyond the origin.
 */
export const CSP_DIRECTIVES: Record<string, string> = {
  'default-src': "'self'",
  'script-src': "'self' 'wasm-unsafe-eval'",
  'style-src': "'self'",
  'img-src': "'self'",
  'font-src': "'self'",
  'connect-src': "'self'",
  'worker-src': "'self'",
  'manifest-src': "'self'",
  'object-src': "'none'",
  'base-uri': "'none'",
  'form-action': "'none'",
};

/** For the meta tag (frame-ancestors is ignored there, so it is only in the header). */
export const CSP_META = Object.entries(CSP_DIRECTIVES).map(([k, v]) => `${k} ${v}`).join('; ');

export const CSP_HEADER = `${CSP_META}; frame-ancestors 'none'`;
