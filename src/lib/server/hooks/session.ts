import type { Handle } from '@sveltejs/kit';
import {
	blankSessionCookie,
	sessionCookie,
	sessionCookieName,
	validateSession
} from '$server/auth/sessions';
import { userForApiToken } from '$server/people';

/** Resolves the session cookie or a personal API token (Bearer) into `locals`. */
export const session: Handle = async ({ event, resolve }) => {
	event.locals.user = null;
	event.locals.session = null;
	event.locals.via = null;
	const secure = event.url.protocol === 'https:';

	const auth = event.request.headers.get('authorization');
	if (auth?.startsWith('Bearer ') && event.url.pathname.startsWith('/api/')) {
		const user = await userForApiToken(auth.slice(7).trim());
		if (user) {
			event.locals.user = {
				id: user.id,
				email: user.email,
				name: user.name,
				role: user.role,
				active: user.active
			};
			event.locals.via = 'token';
		}
		return resolve(event);
	}

	const id = event.cookies.get(sessionCookieName);
	if (id) {
		const result = await validateSession(id);
		if (result) {
			event.locals.user = result.user;
			event.locals.session = result.session;
			event.locals.via = 'session';
			if (result.session.fresh) {
				const c = sessionCookie(result.session.id, secure);
				event.cookies.set(c.name, c.value, c.attributes);
			}
		} else {
			const c = blankSessionCookie(secure);
			event.cookies.set(c.name, c.value, c.attributes);
		}
	}
	return resolve(event);
};
