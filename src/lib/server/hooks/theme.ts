import type { Handle } from '@sveltejs/kit';

export const themes = ['paper', 'night'] as const;
export type Theme = (typeof themes)[number];

export function themeOf(value: string | undefined): Theme {
	return value === 'night' ? 'night' : 'paper';
}

/** Renders the chosen theme into the page so there is no flash of the other one. */
export const theme: Handle = ({ event, resolve }) => {
	const chosen = themeOf(event.cookies.get('skein_theme'));
	return resolve(event, { transformPageChunk: ({ html }) => html.replace('%skein.theme%', chosen) });
};
