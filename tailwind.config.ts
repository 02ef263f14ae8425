import type { Config } from 'tailwindcss';
import { setColors } from './src/lib/set-colors';

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
				set: setColors
			},
			fontFamily: {
				sans: ['"IBM Plex Sans"', 'system-ui', 'sans-serif'],
				mono: ['"IBM Plex Mono"', 'ui-monospace', 'monospace']
			}
		}
	}
} satisfies Config;
