/**
 * Headers every HTTP answer carries (pages, API, static files, errors and redirects alike), set by the
 * production server (server-ws/server.ts) before SvelteKit or the static file server answer. Pages replace
 * this Content-Security-Policy with their own from `kit.csp` (svelte.config.js, with per-request nonces); every
 * other answer keeps the strict one below: nothing but inline style loads, nothing frames it.
 */
export const securityHeaders: Readonly<Record<string, string>> = {
	// inline styles only: SvelteKit's last-resort error page (an error thrown in a hook) styles itself inline
	'content-security-policy':
		"default-src 'none'; style-src 'unsafe-inline'; frame-ancestors 'none'; base-uri 'none'",
	'x-content-type-options': 'nosniff',
	'x-frame-options': 'DENY',
	// reset and invite links carry their token in the path: never let it travel to another site
	'referrer-policy': 'same-origin',
	'cross-origin-opener-policy': 'same-origin'
};
