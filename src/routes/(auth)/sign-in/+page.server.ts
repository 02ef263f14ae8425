import { redirect } from '@sveltejs/kit';
import { signInSchema } from '$lib/validation/people';
import { audit } from '$server/auth/audit';
import { verifyPassword } from '$server/auth/password';
import { createSession, sessionCookie } from '$server/auth/sessions';
import {
	checkSignInThrottle,
	clearSignInFailures,
	recordSignInFailure
} from '$server/auth/throttle';
import { db, schema } from '$server/db';
import { formError, parseForm, safeNext } from '$server/forms';
import { findUserByEmail } from '$server/people';
import { eq } from 'drizzle-orm';
import type { Actions, PageServerLoad } from './$types';

export const load = (({ locals, url }) => {
	if (locals.user) redirect(303, safeNext(url.searchParams.get('next')));
	return { next: url.searchParams.get('next') ?? '' };
}) satisfies PageServerLoad;

export const actions = {
	default: async ({ request, cookies, getClientAddress, url }) => {
		const parsed = await parseForm(request, signInSchema);
		if (!parsed.ok) return parsed.failure;
		const { email, password } = parsed.data;
		const ip = getClientAddress();
		const values = { email };

		const verdict = await checkSignInThrottle(email, ip);
		if (!verdict.allowed) {
			await audit({ id: null, label: email, ip }, 'signin.throttled', email);
			return formError(429, verdict.message, '_', values);
		}
		const user = await findUserByEmail(email);
		const ok = await verifyPassword(user?.passwordHash ?? null, password);
		if (!user || !ok || !user.active) {
			await recordSignInFailure(email, ip);
			await audit({ id: user?.id ?? null, label: email, ip }, 'signin.failed', email, {
				reason: !user ? 'unknown account' : !ok ? 'wrong password' : 'deactivated'
			});
			return formError(400, 'That e-mail and password do not match an active account', '_', values);
		}
		await clearSignInFailures(email);
		const session = await createSession(user.id, {
			ip,
			userAgent: request.headers.get('user-agent')
		});
		const c = sessionCookie(session.id, url.protocol === 'https:');
		cookies.set(c.name, c.value, c.attributes);
		await db()
			.update(schema.users)
			.set({ lastSignInAt: new Date() })
			.where(eq(schema.users.id, user.id));
		await audit({ id: user.id, label: user.email, ip }, 'signin', user.email);
		redirect(303, safeNext(url.searchParams.get('next')));
	}
} satisfies Actions;
