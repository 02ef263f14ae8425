import { error, json, redirect, type Handle, type RequestEvent } from '@sveltejs/kit';
import { timingSafeEqual } from 'node:crypto';
import { can } from '$lib/permissions';
import { routeRules, ruleFor } from '$server/access';

function isLoopback(address: string): boolean {
	return address === '127.0.0.1' || address === '::1' || address === '::ffff:127.0.0.1';
}

function sameSecret(a: string, b: string): boolean {
	const x = Buffer.from(a);
	const y = Buffer.from(b);
	return x.length === y.length && timingSafeEqual(x, y);
}

/**
 * A scraper passes with `Authorization: Bearer $METRICS_TOKEN`, or, only when METRICS_OPEN=loopback, from a
 * loopback address (the client address as adapter-node reports it, so behind a proxy set ADDRESS_HEADER).
 */
function scraperAdmitted(event: RequestEvent): boolean {
	const token = process.env.METRICS_TOKEN;
	const auth = event.request.headers.get('authorization');
	if (token && auth?.startsWith('Bearer ') && sameSecret(auth.slice(7).trim(), token)) return true;
	return process.env.METRICS_OPEN === 'loopback' && isLoopback(event.getClientAddress());
}

/** Enforces src/lib/server/access.ts before any load, action or endpoint runs. Fails closed. */
export const guard: Handle = async ({ event, resolve }) => {
	const routeId = event.route.id;
	if (!routeId) return resolve(event);
	const entry = routeRules[routeId];
	const isApi = routeId.startsWith('/api/') || entry?.scraper === true;
	// `?/name` picks a form action on pages only; an endpoint ignores it
	const search = isApi ? new URLSearchParams() : event.url.searchParams;
	const rule = ruleFor(routeId, event.request.method, search);

	const deny = (status: 401 | 403 | 405, message: string) => {
		if (isApi) {
			const code =
				status === 401 ? 'unauthenticated' : status === 403 ? 'forbidden' : 'method_not_allowed';
			return json({ error: { code, message } }, { status });
		}
		error(status, message);
	};

	if (rule === undefined) return deny(405, 'This route does not accept that request');
	if (rule === 'public') return resolve(event);
	if (entry?.scraper && scraperAdmitted(event)) return resolve(event);

	const user = event.locals.user;
	if (!user) {
		if (entry?.scraper)
			return deny(
				401,
				'Send Authorization: Bearer <METRICS_TOKEN>, or sign in with a role that may'
			);
		if (isApi) return deny(401, 'Sign in or send a personal API token (Authorization: Bearer …)');
		const next = event.url.pathname + event.url.search;
		redirect(303, `/sign-in?next=${encodeURIComponent(next)}`);
	}
	if (rule === 'signed-in' || can(user.role, rule)) return resolve(event);
	return deny(403, `Your role (${user.role}) may not do this`);
};
