import type { Config } from 'tailwindcss';

/** Skein's design tokens (shared/DESIGN.md). Theme colours switch through CSS variables set in app.css. */
export default {
	content: ['./src/**/*.{html,svelte,ts}'],
	theme: {
		extend: {
			colors: {
				page: 'var(--sk-page)',
				panel: 'var(--sk-panel)',
				hairline: 'var(--sk-hairline)',
				ink: 'var(--sk-ink)',
				muted: 'var(--sk-muted)',
				accent: 'var(--sk-accent)',
				danger: 'var(--sk-danger)',
				ok: 'var(--sk-ok)',
				set: {
					measurement: '#C07A12',
					estimate: '#0E7C74',
					truth: '#8E2C66',
					ego: '#243B6B',
					zone: '#4F46E5'
				}
			},
			fontFamily: {
				sans: ['"IBM Plex Sans"', 'system-ui', 'sans-serif'],
				mono: ['"IBM Plex Mono"', 'ui-monospace', 'monospace']
			}
		}
	}
} satisfies Config;
