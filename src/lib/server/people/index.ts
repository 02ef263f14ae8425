import { and, asc, desc, eq, gt, isNull, sql } from 'drizzle-orm';
import { db, schema } from '$server/db';
import type { Role } from '$lib/permissions';
import { hashPassword } from '$server/auth/password';
import { hashSecret, newId, newSecret, secretPrefix } from '$server/auth/tokens';
import { invalidateUserSessions } from '$server/auth/sessions';
import { audit, type Actor } from '$server/auth/audit';
import { PeopleError } from './errors';

export { PeopleError } from './errors';
export * from './passwords';

const u = schema.users;

export async function findUserByEmail(email: string) {
	const [row] = await db()
		.select()
		.from(u)
		.where(sql`lower(${u.email}) = ${email.toLowerCase()}`);
	return row ?? null;
}

export async function getUser(id: string) {
	const [row] = await db().select().from(u).where(eq(u.id, id));
	return row ?? null;
}

export async function createUser(
	actor: Actor,
	input: { email: string; role: Role; name?: string; password?: string }
) {
	if (await findUserByEmail(input.email)) {
		throw new PeopleError('conflict', `${input.email} already has an account`, 'email');
	}
	const id = newId();
	const passwordHash = input.password ? await hashPassword(input.password) : null;
	const [row] = await db()
		.insert(u)
		.values({
			id,
			email: input.email.toLowerCase(),
			name: input.name ?? input.email.split('@')[0],
			role: input.role,
			passwordHash
		})
		.returning();
	await audit(actor, 'person.create', row.email, { role: input.role });
	return row;
}

export async function listPeople() {
	return db()
		.select({
			id: u.id,
			email: u.email,
			name: u.name,
			role: u.role,
			active: u.active,
			createdAt: u.createdAt,
			lastSignInAt: u.lastSignInAt
		})
		.from(u)
		.orderBy(asc(u.email));
}

async function activeAdmins(): Promise<number> {
	const [r] = await db()
		.select({ n: sql<number>`count(*)::int` })
		.from(u)
		.where(and(eq(u.role, 'admin'), eq(u.active, true)));
	return r.n;
}

export async function setRole(actor: Actor, userId: string, role: Role) {
	const target = await getUser(userId);
	if (!target) throw new PeopleError('not_found', 'No such person');
	if (target.role === 'admin' && role !== 'admin' && target.active && (await activeAdmins()) <= 1) {
		throw new PeopleError(
			'invalid',
			'This is the last active admin; make someone else admin first',
			'role'
		);
	}
	await db().update(u).set({ role }).where(eq(u.id, userId));
	await audit(actor, 'person.set_role', target.email, { from: target.role, to: role });
}

export async function setActive(actor: Actor, userId: string, active: boolean) {
	const target = await getUser(userId);
	if (!target) throw new PeopleError('not_found', 'No such person');
	if (!active && target.role === 'admin' && target.active && (await activeAdmins()) <= 1) {
		throw new PeopleError('invalid', 'This is the last active admin and cannot be deactivated');
	}
	await db().update(u).set({ active }).where(eq(u.id, userId));
	if (!active) {
		await invalidateUserSessions(userId);
		await db()
			.update(schema.apiTokens)
			.set({ revokedAt: new Date() })
			.where(and(eq(schema.apiTokens.userId, userId), isNull(schema.apiTokens.revokedAt)));
	}
	await audit(actor, active ? 'person.reactivate' : 'person.deactivate', target.email);
}

// ---- invites ----

export const inviteLifetimeMs = 7 * 24 * 3600_000;

export async function createInvite(actor: Actor, email: string, role: Role) {
	const existing = await findUserByEmail(email);
	if (existing) throw new PeopleError('conflict', `${email} already has an account`, 'email');
	const token = newSecret('ski');
	const id = newId();
	const expiresAt = new Date(Date.now() + inviteLifetimeMs);
	await db()
		.insert(schema.invites)
		.values({
			id,
			email: email.toLowerCase(),
			role,
			tokenHash: hashSecret(token),
			invitedBy: actor.id,
			expiresAt
		});
	await audit(actor, 'invite.create', email, { role });
	return { id, token, expiresAt };
}

export async function findOpenInvite(token: string) {
	const i = schema.invites;
	const [row] = await db()
		.select()
		.from(i)
		.where(
			and(
				eq(i.tokenHash, hashSecret(token)),
				isNull(i.usedAt),
				isNull(i.revokedAt),
				gt(i.expiresAt, new Date())
			)
		);
	return row ?? null;
}

export async function listInvites() {
	const i = schema.invites;
	return db()
		.select({
			id: i.id,
			email: i.email,
			role: i.role,
			createdAt: i.createdAt,
			expiresAt: i.expiresAt,
			usedAt: i.usedAt,
			revokedAt: i.revokedAt
		})
		.from(i)
		.orderBy(desc(i.createdAt))
		.limit(100);
}

export async function revokeInvite(actor: Actor, id: string) {
	const i = schema.invites;
	const [row] = await db()
		.update(i)
		.set({ revokedAt: new Date() })
		.where(and(eq(i.id, id), isNull(i.usedAt)))
		.returning();
	if (!row) throw new PeopleError('not_found', 'No open invite with that id');
	await audit(actor, 'invite.revoke', row.email);
}

/** Single use: the invite is marked used in the same transaction that creates the account. */
export async function acceptInvite(
	token: string,
	name: string,
	password: string,
	ip: string | null
) {
	const passwordHash = await hashPassword(password);
	const i = schema.invites;
	return db().transaction(async (tx) => {
		const [invite] = await tx
			.update(i)
			.set({ usedAt: new Date() })
			.where(
				and(
					eq(i.tokenHash, hashSecret(token)),
					isNull(i.usedAt),
					isNull(i.revokedAt),
					gt(i.expiresAt, new Date())
				)
			)
			.returning();
		if (!invite)
			throw new PeopleError(
				'invalid',
				'This invite link is not valid: it was used, revoked or has expired'
			);
		const [taken] = await tx
			.select({ id: u.id })
			.from(u)
			.where(sql`lower(${u.email}) = ${invite.email}`);
		if (taken) throw new PeopleError('conflict', `${invite.email} already has an account`);
		const [user] = await tx
			.insert(u)
			.values({ id: newId(), email: invite.email, name, role: invite.role, passwordHash })
			.returning();
		await tx.insert(schema.auditLog).values({
			actorId: user.id,
			actorLabel: user.email,
			action: 'invite.accept',
			target: user.email,
			ip
		});
		return user;
	});
}

// ---- personal API tokens ----

export async function createApiToken(actor: Actor, userId: string, name: string) {
	const token = newSecret('skt');
	const id = newId();
	await db()
		.insert(schema.apiTokens)
		.values({ id, userId, name, prefix: secretPrefix(token), tokenHash: hashSecret(token) });
	await audit(actor, 'token.create', name, { id });
	return { id, token };
}

export async function listApiTokens(userId: string) {
	const t = schema.apiTokens;
	return db()
		.select({
			id: t.id,
			name: t.name,
			prefix: t.prefix,
			createdAt: t.createdAt,
			lastUsedAt: t.lastUsedAt,
			revokedAt: t.revokedAt
		})
		.from(t)
		.where(eq(t.userId, userId))
		.orderBy(desc(t.createdAt));
}

export async function revokeApiToken(actor: Actor, userId: string, id: string) {
	const t = schema.apiTokens;
	const [row] = await db()
		.update(t)
		.set({ revokedAt: new Date() })
		.where(and(eq(t.id, id), eq(t.userId, userId), isNull(t.revokedAt)))
		.returning();
	if (!row) throw new PeopleError('not_found', 'No active token with that id');
	await audit(actor, 'token.revoke', row.name, { id });
}

export async function userForApiToken(token: string) {
	const t = schema.apiTokens;
	const [row] = await db()
		.select({
			tokenId: t.id,
			id: u.id,
			email: u.email,
			name: u.name,
			role: u.role,
			active: u.active
		})
		.from(t)
		.innerJoin(u, eq(u.id, t.userId))
		.where(and(eq(t.tokenHash, hashSecret(token)), isNull(t.revokedAt)));
	if (!row || !row.active) return null;
	await db().update(t).set({ lastUsedAt: new Date() }).where(eq(t.id, row.tokenId));
	return row;
}

// ---- own sessions ----

export async function listSessions(userId: string) {
	const s = schema.sessions;
	return db()
		.select({
			id: s.id,
			createdAt: s.createdAt,
			expiresAt: s.expiresAt,
			ip: s.ip,
			userAgent: s.userAgent
		})
		.from(s)
		.where(and(eq(s.userId, userId), gt(s.expiresAt, new Date())))
		.orderBy(desc(s.createdAt));
}

export async function revokeSession(actor: Actor, userId: string, sessionId: string) {
	const s = schema.sessions;
	const [row] = await db()
		.delete(s)
		.where(and(eq(s.id, sessionId), eq(s.userId, userId)))
		.returning({ id: s.id });
	if (!row) throw new PeopleError('not_found', 'No such session');
	await audit(actor, 'session.revoke', null);
}

export async function setName(userId: string, name: string) {
	await db().update(u).set({ name }).where(eq(u.id, userId));
}
