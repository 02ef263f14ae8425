import adapter from '@sveltejs/adapter-node';
import { vitePreprocess } from '@sveltejs/vite-plugin-svelte';

/** @type {import('@sveltejs/kit').Config} */
const config = {
	preprocess: vitePreprocess(),
	kit: {
		adapter: adapter({ out: 'build' }),
		alias: {
			$server: 'src/lib/server'
		},
		// Pages only (every other answer gets a stricter policy: src/lib/server/security-headers.ts). Scripts
		// come from this origin or carry SvelteKit's nonce; pixi.js runs without eval through
		// `pixi.js/unsafe-eval`; the fonts ship with the app; the sockets are same-origin ('self' covers ws:).
		// Inline styles stay allowed: Svelte and uPlot set style attributes.
		csp: {
			mode: 'auto',
			directives: {
				'default-src': ['self'],
				'script-src': ['self'],
				'style-src': ['self', 'unsafe-inline'],
				'img-src': ['self', 'data:', 'blob:'],
				'font-src': ['self', 'data:'],
				'connect-src': ['self'],
				'worker-src': ['self', 'blob:'],
				'object-src': ['none'],
				'base-uri': ['self'],
				'form-action': ['self'],
				'frame-ancestors': ['none']
			}
		}
	}
};

export default config;
