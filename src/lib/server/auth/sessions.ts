/**
 * Sessions, behind one module: the only file that imports `lucia` (upstream is no longer maintained;
 * replacing it means rewriting this file alone). Sessions live in PostgreSQL.
 */
import { DrizzlePostgreSQLAdapter } from '@lucia-auth/adapter-drizzle';
import { Lucia, TimeSpan } from 'lucia';
import { db, schema } from '$server/db';
import type { Role } from '$lib/permissions';

export interface SessionUser {
	id: string;
	email: string;
	name: string;
	role: Role;
	active: boolean;
}

export interface SessionInfo {
	id: string;
	userId: string;
	expiresAt: Date;
	fresh: boolean;
}

export interface SessionCookie {
	name: string;
	value: string;
	attributes: {
		path: string;
		httpOnly: boolean;
		sameSite: 'lax';
		maxAge?: number;
		secure: boolean;
	};
}

function createLucia() {
	const adapter = new DrizzlePostgreSQLAdapter(db(), schema.sessions, schema.users);
	return new Lucia(adapter, {
		sessionExpiresIn: new TimeSpan(14, 'd'),
		sessionCookie: { name: 'skein_session', attributes: { sameSite: 'lax' } },
		getUserAttributes: (a) => ({ email: a.email, name: a.name, role: a.role, active: a.active })
	});
}

let instance: ReturnType<typeof createLucia> | undefined;
function lucia() {
	instance ??= createLucia();
	return instance;
}

declare module 'lucia' {
	interface Register {
		Lucia: ReturnType<typeof createLucia>;
		DatabaseUserAttributes: { email: string; name: string; role: Role; active: boolean };
		DatabaseSessionAttributes: { ip: string | null; userAgent: string | null };
	}
}

export const sessionCookieName = 'skein_session';

export async function createSession(
	userId: string,
	meta: { ip: string | null; userAgent: string | null }
) {
	const session = await lucia().createSession(userId, meta);
	return { id: session.id, userId: session.userId, expiresAt: session.expiresAt, fresh: true };
}

export async function validateSession(
	sessionId: string
): Promise<{ session: SessionInfo; user: SessionUser } | null> {
	const { session, user } = await lucia().validateSession(sessionId);
	if (!session || !user) return null;
	if (!user.active) {
		await lucia().invalidateUserSessions(user.id);
		return null;
	}
	return {
		session: {
			id: session.id,
			userId: session.userId,
			expiresAt: session.expiresAt,
			fresh: session.fresh
		},
		user: { id: user.id, email: user.email, name: user.name, role: user.role, active: user.active }
	};
}

export function invalidateSession(sessionId: string): Promise<void> {
	return lucia().invalidateSession(sessionId);
}

export function invalidateUserSessions(userId: string): Promise<void> {
	return lucia().invalidateUserSessions(userId);
}

/** Secure is set when the request came over TLS (directly or through a proxy adapter-node trusts). */
export function sessionCookie(sessionId: string, secure: boolean): SessionCookie {
	const c = lucia().createSessionCookie(sessionId);
	return {
		name: c.name,
		value: c.value,
		attributes: { path: '/', httpOnly: true, sameSite: 'lax', maxAge: c.attributes.maxAge, secure }
	};
}

export function blankSessionCookie(secure: boolean): SessionCookie {
	const c = lucia().createBlankSessionCookie();
	return {
		name: c.name,
		value: c.value,
		attributes: { path: '/', httpOnly: true, sameSite: 'lax', maxAge: 0, secure }
	};
}
