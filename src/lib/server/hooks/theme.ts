import type { Handle } from '@sveltejs/kit';

export const themes = ['paper', 'night'] as const;
export type Theme = (typeof themes)[number];

export function themeOf(value: string | undefined): Theme {
	return value === 'night' ? 'night' : 'paper';
}

/** Renders the chosen theme into the page so there is no flash of the other one. */
export const theme: Handle = ({ event, resolve }) => {
	// read when rendering, so a theme chosen by this very request already applies
	return resolve(event, {
		transformPageChunk: ({ html }) =>
			html.replace('%skein.theme%', themeOf(event.cookies.get('skein_theme')))
	});
};
