import { eq } from 'drizzle-orm';
import { beforeAll, describe, expect, inject, it } from 'vitest';
import { db, schema } from '$server/db';
import { Browserish } from '../support/client';
import { makePerson, uniqueEmail } from '../support/factories';
import { waitForMail } from './mail';

let base: string;
let admin: Browserish;

beforeAll(async () => {
	base = inject('appUrl');
	const a = await makePerson('admin', 'auth-admin');
	admin = new Browserish(base);
	await admin.signIn(a.email, a.password);
});

async function auditActions(target: string): Promise<string[]> {
	const rows = await db().select().from(schema.auditLog).where(eq(schema.auditLog.target, target));
	return rows.map((r) => r.action);
}

describe('sign in and out', () => {
	it('sets an httpOnly, SameSite=Lax session cookie and signs out', async () => {
		const p = await makePerson('viewer', 'cookie');
		const c = new Browserish(base);
		const res = await c.signIn(p.email, p.password);
		expect(res.status).toBe(303);
		const cookie = res.headers.getSetCookie().find((l) => l.startsWith('skein_session='))!;
		expect(cookie).toMatch(/HttpOnly/i);
		expect(cookie).toMatch(/SameSite=Lax/i);
		expect(cookie).not.toMatch(/Secure/i); // plain http on loopback; behind TLS it is Secure
		expect((await c.get('/runs')).status).toBe(200);
		const out = await c.postForm('/sign-out', {});
		expect(out.status).toBe(303);
		expect((await c.get('/runs')).status).toBe(303);
		expect(await auditActions(p.email)).toEqual(expect.arrayContaining(['signin', 'signout']));
	});

	it('refuses a wrong password with one message and records it', async () => {
		const p = await makePerson('viewer', 'wrong');
		const c = new Browserish(base);
		const res = await c.signIn(p.email, 'not-the-password');
		expect(res.status).toBe(400);
		expect(await res.text()).toContain('do not match an active account');
		expect(c.cookies.has('skein_session')).toBe(false);
		expect(await auditActions(p.email)).toContain('signin.failed');
	});

	it.each([
		[{ email: '', password: 'x' }, 'Enter a valid e-mail address'],
		[{ email: 'not-an-email', password: 'x' }, 'Enter a valid e-mail address'],
		[{ email: 'a@b.test', password: '' }, 'Enter your password'],
		[{ email: 'a@b.test' }, 'Enter your password']
	])('shows a field error for bad sign-in input %j', async (fields, message) => {
		const res = await new Browserish(base).postForm('/sign-in', fields as Record<string, string>);
		expect(res.status).toBe(400);
		expect(await res.text()).toContain(message);
	});

	it('throttles an account after repeated failures, with a clear message, even for the right password', async () => {
		const p = await makePerson('viewer', 'throttle');
		const c = new Browserish(base);
		for (let i = 0; i < 5; i++)
			expect((await c.signIn(p.email, 'wrong-password!')).status).toBe(400);
		const res = await c.signIn(p.email, p.password);
		expect(res.status).toBe(429);
		expect(await res.text()).toContain('Too many failed sign-ins for this account');
		expect(await auditActions(p.email)).toContain('signin.throttled');
	});

	it('refuses cross-site form posts', async () => {
		const res = await fetch(`${base}/sign-in`, {
			method: 'POST',
			headers: {
				origin: 'http://evil.example',
				'content-type': 'application/x-www-form-urlencoded'
			},
			body: 'email=a%40b.test&password=x'
		});
		expect(res.status).toBe(403);
	});
});

describe('sessions and passwords', () => {
	it('lists my sessions and revokes another one', async () => {
		const p = await makePerson('engineer', 'sessions');
		const first = new Browserish(base);
		const second = new Browserish(base);
		await first.signIn(p.email, p.password);
		await second.signIn(p.email, p.password);
		const page = await (await first.get('/settings')).text();
		const handles = [...page.matchAll(/name="handle" value="([0-9a-f]{20})"/g)].map((m) => m[1]);
		expect(handles).toHaveLength(1); // the other browser's; this one is marked "this browser"
		expect((await first.postForm('/settings?/revokeSession', { handle: handles[0] })).status).toBe(
			200
		);
		expect((await second.get('/runs')).status).toBe(303);
		expect((await first.get('/runs')).status).toBe(200);
		const bad = await first.postForm('/settings?/revokeSession', { handle: 'zz' });
		expect(bad.status).toBe(400);
	});

	it('changes the password: wrong current refused, other sessions ended, new password works', async () => {
		const p = await makePerson('triage', 'pwchange');
		const a = new Browserish(base);
		const b = new Browserish(base);
		await a.signIn(p.email, p.password);
		await b.signIn(p.email, p.password);
		const wrong = await a.postForm('/settings?/password', {
			current: 'nope',
			password: 'a-new-password-1',
			confirm: 'a-new-password-1'
		});
		expect(wrong.status).toBe(400);
		const mismatch = await a.postForm('/settings?/password', {
			current: p.password,
			password: 'a-new-password-1',
			confirm: 'different-1234'
		});
		expect(mismatch.status).toBe(400);
		expect(await mismatch.text()).toContain('Passwords do not match');
		const short = await a.postForm('/settings?/password', {
			current: p.password,
			password: 'short',
			confirm: 'short'
		});
		expect(await short.text()).toContain('At least 10 characters');
		const ok = await a.postForm('/settings?/password', {
			current: p.password,
			password: 'a-new-password-1',
			confirm: 'a-new-password-1'
		});
		expect(ok.status).toBe(200);
		expect((await a.get('/runs')).status).toBe(200);
		expect((await b.get('/runs')).status).toBe(303);
		expect((await new Browserish(base).signIn(p.email, 'a-new-password-1')).status).toBe(303);
		expect((await new Browserish(base).signIn(p.email, p.password)).status).toBe(400);
	});

	it('resets a forgotten password by a single-use mailed link', async () => {
		const p = await makePerson('viewer', 'reset');
		const anon = new Browserish(base);
		const res = await anon.postForm('/forgot', { email: p.email });
		expect(res.status).toBe(200);
		const { link } = await waitForMail(admin, p.email, /Reset your Skein password/);
		expect(link.pathname).toMatch(/^\/reset\/skr_/);
		const page = await anon.get(link.pathname);
		expect(await page.text()).toContain('Choose a new password');
		const done = await anon.postForm(link.pathname, {
			password: 'reset-password-9',
			confirm: 'reset-password-9'
		});
		expect(done.status).toBe(303);
		expect((await new Browserish(base).signIn(p.email, 'reset-password-9')).status).toBe(303);
		// single use
		const again = await anon.postForm(link.pathname, {
			password: 'another-password-9',
			confirm: 'another-password-9'
		});
		expect(again.status).toBe(400);
		expect(await again.text()).toContain('not valid');
		expect(await auditActions(p.email)).toContain('password.reset');
	});

	it('answers the same for unknown addresses and sends nothing', async () => {
		const email = uniqueEmail('nobody');
		const res = await new Browserish(base).postForm('/forgot', { email });
		expect(res.status).toBe(200);
		expect(await res.text()).toContain('If');
		const list = (await (await admin.json('/api/dev/mail', 'GET')).json()) as {
			messages: { to: string[] }[];
		};
		expect(list.messages.some((m) => m.to.includes(email))).toBe(false);
	});

	it('refuses an expired reset link', async () => {
		const p = await makePerson('viewer', 'reset-exp');
		await new Browserish(base).postForm('/forgot', { email: p.email });
		const { link } = await waitForMail(admin, p.email, /Reset/);
		await db()
			.update(schema.passwordResets)
			.set({ expiresAt: new Date(Date.now() - 1000) })
			.where(eq(schema.passwordResets.userId, p.id));
		const res = await new Browserish(base).postForm(link.pathname, {
			password: 'reset-password-9',
			confirm: 'reset-password-9'
		});
		expect(res.status).toBe(400);
	});
});

describe('people: invite, roles, deactivation', () => {
	it('invites by mail; the link sets name and password once, then signs the person in', async () => {
		const email = uniqueEmail('invitee');
		const res = await admin.postForm('/people?/invite', { email, role: 'engineer' });
		expect(res.status).toBe(200);
		const { mail, link } = await waitForMail(admin, email, /invited/);
		expect(mail.text).toContain('as engineer');
		const guest = new Browserish(base);
		expect(await (await guest.get(link.pathname)).text()).toContain('Join Skein');
		const bad = await guest.postForm(link.pathname, { name: '', password: 'short', confirm: 'x' });
		expect(bad.status).toBe(400);
		const joined = await guest.postForm(link.pathname, {
			name: 'Ada Newcomer',
			password: 'invitee-password-1',
			confirm: 'invitee-password-1'
		});
		expect(joined.status).toBe(303);
		const me = (await (await guest.json('/api/me', 'GET')).json()) as {
			user: { email: string; role: string; name: string };
		};
		expect(me.user).toMatchObject({ email, role: 'engineer', name: 'Ada Newcomer' });
		const reuse = await new Browserish(base).postForm(link.pathname, {
			name: 'X',
			password: 'invitee-password-2',
			confirm: 'invitee-password-2'
		});
		expect(reuse.status).toBe(400);
	});

	it('refuses expired invites and invites for existing accounts', async () => {
		const email = uniqueEmail('late');
		await admin.postForm('/people?/invite', { email, role: 'viewer' });
		const { link } = await waitForMail(admin, email, /invited/);
		await db()
			.update(schema.invites)
			.set({ expiresAt: new Date(Date.now() - 1) })
			.where(eq(schema.invites.email, email));
		const res = await new Browserish(base).postForm(link.pathname, {
			name: 'Late',
			password: 'late-password-1',
			confirm: 'late-password-1'
		});
		expect(res.status).toBe(400);
		const p = await makePerson('viewer', 'exists');
		const dup = await admin.postForm('/people?/invite', { email: p.email, role: 'viewer' });
		expect(dup.status).toBe(409);
		const badRole = await admin.json('/api/people', 'POST', {
			email: uniqueEmail('x'),
			role: 'superuser'
		});
		expect(badRole.status).toBe(422);
		const body = (await badRole.json()) as {
			error: { code: string; details: Record<string, string> };
		};
		expect(body.error.code).toBe('invalid');
		expect(body.error.details.role).toContain('Role must be one of');
	});

	it('changes a role and deactivation ends sessions at once', async () => {
		const p = await makePerson('viewer', 'deact');
		const c = new Browserish(base);
		await c.signIn(p.email, p.password);
		expect((await admin.json(`/api/people/${p.id}`, 'PATCH', { role: 'triage' })).status).toBe(200);
		expect(
			((await (await c.json('/api/me', 'GET')).json()) as { user: { role: string } }).user.role
		).toBe('triage');
		const badPatch = await admin.json(`/api/people/${p.id}`, 'PATCH', { role: 'triage', extra: 1 });
		expect(badPatch.status).toBe(422);
		const notJson = await admin.json(`/api/people/${p.id}`, 'PATCH', '{nope');
		expect(notJson.status).toBe(400);
		expect((await admin.postForm('/people?/active', { id: p.id, active: 'false' })).status).toBe(
			200
		);
		expect((await c.get('/runs')).status).toBe(303);
		expect((await new Browserish(base).signIn(p.email, p.password)).status).toBe(400);
		expect(await auditActions(p.email)).toEqual(
			expect.arrayContaining(['person.set_role', 'person.deactivate'])
		);
	});
});

describe('personal API tokens', () => {
	it('creates, uses and revokes a token; the secret is shown once and stored hashed', async () => {
		const p = await makePerson('viewer', 'token');
		const c = new Browserish(base);
		await c.signIn(p.email, p.password);
		const created = (await (
			await c.json('/api/tokens', 'POST', { name: 'nightly export' })
		).json()) as { token: { id: string; secret: string } };
		expect(created.token.secret).toMatch(/^skt_/);
		const [row] = await db()
			.select()
			.from(schema.apiTokens)
			.where(eq(schema.apiTokens.id, created.token.id));
		expect(row.tokenHash).not.toContain(created.token.secret);
		const viaToken = await fetch(`${base}/api/me`, {
			headers: { authorization: `Bearer ${created.token.secret}` }
		});
		expect(viaToken.status).toBe(200);
		expect(((await viaToken.json()) as { via: string }).via).toBe('token');
		const listed = (await (await c.json('/api/tokens', 'GET')).json()) as {
			tokens: Record<string, unknown>[];
		};
		expect(JSON.stringify(listed)).not.toContain(created.token.secret);
		expect((await c.json(`/api/tokens/${created.token.id}`, 'DELETE')).status).toBe(204);
		const after = await fetch(`${base}/api/me`, {
			headers: { authorization: `Bearer ${created.token.secret}` }
		});
		expect(after.status).toBe(401);
		expect((await c.json('/api/tokens', 'POST', { name: '' })).status).toBe(422);
		expect(
			(await fetch(`${base}/api/me`, { headers: { authorization: 'Bearer skt_bogus' } })).status
		).toBe(401);
	});

	it('a viewer token cannot do admin work', async () => {
		const p = await makePerson('viewer', 'tok-viewer');
		const c = new Browserish(base);
		await c.signIn(p.email, p.password);
		const { token } = (await (await c.json('/api/tokens', 'POST', { name: 'x' })).json()) as {
			token: { secret: string };
		};
		const res = await fetch(`${base}/api/people`, {
			method: 'POST',
			headers: { authorization: `Bearer ${token.secret}`, 'content-type': 'application/json' },
			body: JSON.stringify({ email: uniqueEmail('x'), role: 'admin' })
		});
		expect(res.status).toBe(403);
		expect(((await res.json()) as { error: { code: string } }).error.code).toBe('forbidden');
	});
});

describe('operations', () => {
	it('health and metrics', async () => {
		const h = await fetch(`${base}/healthz`);
		expect(await h.json()).toEqual({
			status: 'ok',
			database: 'reachable',
			ingest: 'ok',
			live: 'ok'
		});
		const m = await admin.get('/metrics');
		expect(m.headers.get('content-type')).toContain('text/plain');
		expect(await m.text()).toContain('skein_http_request_duration_seconds');
	});

	it('admins read the audit log', async () => {
		const res = await admin.json('/api/audit?limit=5', 'GET');
		expect(res.status).toBe(200);
		const body = (await res.json()) as { entries: { action: string }[] };
		expect(body.entries.length).toBeGreaterThan(0);
		expect((await admin.json('/api/audit?limit=0', 'GET')).status).toBe(422);
	});
});
