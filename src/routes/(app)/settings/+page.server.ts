import { createHash } from 'node:crypto';
import { z } from 'zod';
import { changePasswordSchema, nameField, tokenNameSchema } from '$lib/validation/people';
import { actorOf } from '$server/api';
import { audit } from '$server/auth/audit';
import { verifyPassword } from '$server/auth/password';
import { createSession, sessionCookie } from '$server/auth/sessions';
import {
	checkSignInThrottle,
	clearSignInFailures,
	recordSignInFailure
} from '$server/auth/throttle';
import { formError, parseForm } from '$server/forms';
import { themes } from '$server/hooks/theme';
import {
	changePassword,
	createApiToken,
	getUser,
	listApiTokens,
	listSessions,
	PeopleError,
	revokeApiToken,
	revokeSession,
	setName
} from '$server/people';
import type { Actions, PageServerLoad } from './$types';

/** Session ids never leave the server; the page addresses them by a digest. */
function handle(id: string) {
	return createHash('sha256').update(id).digest('hex').slice(0, 20);
}

export const load = (async ({ locals, cookies }) => {
	const user = locals.user!;
	const [sessions, tokens] = await Promise.all([listSessions(user.id), listApiTokens(user.id)]);
	return {
		theme: cookies.get('skein_theme') === 'night' ? 'night' : 'paper',
		sessions: sessions.map(({ id, ...rest }) => ({
			...rest,
			handle: handle(id),
			current: id === locals.session?.id
		})),
		tokens
	};
}) satisfies PageServerLoad;

export const actions = {
	profile: async ({ request, locals }) => {
		const parsed = await parseForm(request, z.object({ name: nameField }));
		if (!parsed.ok) return parsed.failure;
		await setName(locals.user!.id, parsed.data.name);
		return { saved: 'profile' };
	},
	theme: async ({ request, cookies }) => {
		const parsed = await parseForm(
			request,
			z.object({ theme: z.enum(themes, { error: 'Pick Paper or Night' }) })
		);
		if (!parsed.ok) return parsed.failure;
		cookies.set('skein_theme', parsed.data.theme, {
			path: '/',
			httpOnly: false,
			sameSite: 'lax',
			maxAge: 365 * 86400
		});
		return { saved: 'theme' };
	},
	password: async ({ request, locals, cookies, url, getClientAddress }) => {
		const parsed = await parseForm(request, changePasswordSchema);
		if (!parsed.ok) return parsed.failure;
		const user = await getUser(locals.user!.id);
		if (!user) return formError(404, 'No such person');
		const ip = getClientAddress();
		// the same throttle as sign-in, on the same counters: a stolen session cannot guess the password here
		const verdict = await checkSignInThrottle(user.email, ip);
		if (!verdict.allowed) {
			await audit(actorOf(locals, ip), 'password.change_throttled', user.email);
			return formError(429, verdict.message, 'current');
		}
		if (!(await verifyPassword(user.passwordHash, parsed.data.current))) {
			await recordSignInFailure(user.email, ip);
			await audit(actorOf(locals, ip), 'password.change_failed', user.email);
			return formError(400, 'Your current password is not right', 'current');
		}
		await clearSignInFailures(user.email);
		const ended = await changePassword(
			actorOf(locals, ip),
			user.id,
			parsed.data.password,
			parsed.data.revokeTokens
		);
		// every session of the account ended with the change; this browser gets a fresh one
		const session = await createSession(user.id, {
			ip,
			userAgent: request.headers.get('user-agent')
		});
		const c = sessionCookie(session.id, url.protocol === 'https:');
		cookies.set(c.name, c.value, c.attributes);
		return { saved: 'password', tokensRevoked: ended.tokens };
	},
	revokeSession: async ({ request, locals, getClientAddress }) => {
		const parsed = await parseForm(
			request,
			z.object({ handle: z.string().regex(/^[0-9a-f]{20}$/, 'Unknown session') })
		);
		if (!parsed.ok) return parsed.failure;
		const mine = await listSessions(locals.user!.id);
		const target = mine.find((s) => handle(s.id) === parsed.data.handle);
		if (!target) return formError(404, 'No such session');
		await revokeSession(actorOf(locals, getClientAddress()), locals.user!.id, target.id);
		return { saved: 'sessions' };
	},
	createToken: async ({ request, locals, getClientAddress }) => {
		const parsed = await parseForm(request, tokenNameSchema);
		if (!parsed.ok) return parsed.failure;
		const created = await createApiToken(
			actorOf(locals, getClientAddress()),
			locals.user!.id,
			parsed.data.name
		);
		return { newToken: created.token, tokenName: parsed.data.name };
	},
	revokeToken: async ({ request, locals, getClientAddress }) => {
		const parsed = await parseForm(
			request,
			z.object({ id: z.string().regex(/^[A-Za-z0-9_-]{20}$/, 'Unknown token') })
		);
		if (!parsed.ok) return parsed.failure;
		try {
			await revokeApiToken(actorOf(locals, getClientAddress()), locals.user!.id, parsed.data.id);
		} catch (err) {
			if (err instanceof PeopleError) return formError(404, err.message);
			throw err;
		}
		return { saved: 'tokens' };
	}
} satisfies Actions;
