/**
 * What a security probe of Skein found (issue 11, findings 6, 7, 9, 12 and 13): mailed links that followed the
 * Host header, an open redirect after sign-in, credentials outliving a password change, a trusted proxy that
 * was implicit, /metrics open to every loopback caller, and the guard reading another form action than SvelteKit.
 */
import { request as httpRequest } from 'node:http';
import { eq } from 'drizzle-orm';
import { afterAll, beforeAll, describe, expect, inject, it } from 'vitest';
import { verifyPassword } from '$server/auth/password';
import { db, schema } from '$server/db';
import { startApp, type RunningApp } from '../support/app';
import { Browserish } from '../support/client';
import { makePerson, uniqueEmail } from '../support/factories';
import { streamRun } from '../support/rigs';
import { waitForMail } from './mail';

let base: string;
let admin: Browserish;

beforeAll(async () => {
	base = inject('appUrl');
	const a = await makePerson('admin', 'sec-admin');
	admin = new Browserish(base);
	await admin.signIn(a.email, a.password);
});

/** A raw HTTP request, so the Host header can be forged (fetch does not let a caller set it). */
function raw(
	url: string,
	opts: { method?: string; headers?: Record<string, string>; body?: string }
): Promise<{ status: number; headers: Record<string, string | string[] | undefined> }> {
	return new Promise((resolve, reject) => {
		const req = httpRequest(url, { method: opts.method ?? 'GET', headers: opts.headers }, (res) => {
			res.resume();
			res.on('end', () => resolve({ status: res.statusCode ?? 0, headers: res.headers }));
		});
		req.on('error', reject);
		req.end(opts.body);
	});
}

describe('mailed links come from the configured origin', () => {
	it('a reset asked for with a forged Host header mails a link to the app itself', async () => {
		const p = await makePerson('viewer', 'forged-host');
		const res = await raw(`${base}/forgot`, {
			method: 'POST',
			headers: {
				host: 'attacker.example',
				origin: 'http://attacker.example',
				'content-type': 'application/x-www-form-urlencoded'
			},
			body: new URLSearchParams({ email: p.email }).toString()
		});
		expect(res.status).toBe(200);
		const { link } = await waitForMail(admin, p.email, /Reset your Skein password/);
		// the test app runs without ORIGIN on HOST=127.0.0.1: its own address is the default origin
		expect(link.origin).toBe(base);
		expect(link.pathname).toMatch(/^\/reset\/skr_/);
	});

	it('an invite sent over a forged Host header links to the app itself', async () => {
		const email = uniqueEmail('forged-invite');
		const cookie = [...admin.cookies].map(([k, v]) => `${k}=${v}`).join('; ');
		const res = await raw(`${base}/api/people`, {
			method: 'POST',
			headers: {
				host: 'attacker.example',
				origin: 'http://attacker.example',
				cookie,
				'content-type': 'application/json'
			},
			body: JSON.stringify({ email, role: 'viewer' })
		});
		expect(res.status).toBe(201);
		const { link } = await waitForMail(admin, email, /You are invited to Skein/);
		expect(link.origin).toBe(base);
	});
});

describe('after sign-in, only paths of this site', () => {
	const offSite = [
		'/%09/attacker.example',
		'/%0a/attacker.example',
		'/%0d%0a/attacker.example',
		'//attacker.example',
		'//attacker.example/runs',
		'/\\attacker.example',
		'/%5Cattacker.example',
		'/%2F/attacker.example',
		'\\\\attacker.example',
		'https://attacker.example',
		'https:attacker.example',
		'http:/attacker.example',
		'javascript:alert(1)',
		'/%00/attacker.example',
		'%2F%2Fattacker.example',
		' //attacker.example',
		'/ /attacker.example',
		'attacker.example'
	];

	it.each(offSite)('next=%s stays on this origin', async (next) => {
		const p = await makePerson('viewer', 'next');
		const c = new Browserish(base);
		const res = await c.postForm(`/sign-in?next=${next}`, { email: p.email, password: p.password });
		expect(res.status).toBe(303);
		const location = res.headers.get('location')!;
		// how a browser resolves the redirect: the WHATWG URL parser, as chromium does
		expect(new URL(location, base).origin, location).toBe(base);
		// signed in already, the sign-in page redirects the same way
		const again = await c.get(`/sign-in?next=${next}`);
		expect(new URL(again.headers.get('location')!, base).origin).toBe(base);
	});

	it.each([
		['/runs?status=live', '/runs?status=live'],
		['%2Fpins', '/pins'],
		['/settings%23tokens', '/settings#tokens']
	])('next=%s is kept', async (next, want) => {
		const p = await makePerson('viewer', 'next-ok');
		const res = await new Browserish(base).postForm(`/sign-in?next=${next}`, {
			email: p.email,
			password: p.password
		});
		expect(res.headers.get('location')).toBe(want);
	});
});

async function newToken(c: Browserish, name: string): Promise<string> {
	const res = await c.json('/api/tokens', 'POST', { name });
	expect(res.status).toBe(201);
	return ((await res.json()) as { token: { secret: string } }).token.secret;
}

const tokenWorks = async (secret: string) =>
	(await fetch(`${base}/api/me`, { headers: { authorization: `Bearer ${secret}` } })).status ===
	200;

const seenLinks = new Set<string>();

/** Asks for a reset link and returns the path of the new one. */
async function resetLink(email: string): Promise<string> {
	expect((await new Browserish(base).postForm('/forgot', { email })).status).toBe(200);
	const deadline = Date.now() + 10_000;
	for (;;) {
		const { messages } = (await (await admin.json('/api/dev/mail', 'GET')).json()) as {
			messages: { to: string[]; text: string }[];
		};
		const fresh = messages
			.filter((m) => m.to.includes(email))
			.map((m) => new URL(m.text.match(/https?:\/\/\S+/)![0]).pathname)
			.find((path) => !seenLinks.has(path));
		if (fresh) {
			seenLinks.add(fresh);
			return fresh;
		}
		if (Date.now() > deadline) throw new Error(`no new reset mail to ${email}`);
		await new Promise((r) => setTimeout(r, 100));
	}
}

describe('a new password ends the old credentials', () => {
	it('a reset ends every session and API token, and voids the other reset links', async () => {
		const p = await makePerson('engineer', 'reset-ends');
		const browser = new Browserish(base);
		await browser.signIn(p.email, p.password);
		const token = await newToken(browser, 'before reset');
		expect(await tokenWorks(token)).toBe(true);
		const older = await resetLink(p.email);
		const newer = await resetLink(p.email);
		expect(older).not.toBe(newer);

		const done = await new Browserish(base).postForm(newer, {
			password: 'after-reset-1234',
			confirm: 'after-reset-1234'
		});
		expect(done.status).toBe(303);
		expect((await browser.get('/runs')).status).toBe(303); // the session ended
		expect(await tokenWorks(token)).toBe(false);
		const stale = await new Browserish(base).postForm(older, {
			password: 'attacker-pass-1234',
			confirm: 'attacker-pass-1234'
		});
		expect(stale.status).toBe(400);
		expect(await stale.text()).toContain('not valid');
		const [row] = await db().select().from(schema.users).where(eq(schema.users.id, p.id));
		expect(await verifyPassword(row.passwordHash, 'after-reset-1234')).toBe(true);
	});

	it('a change ends the other sessions, voids reset links and revokes API tokens when asked', async () => {
		const p = await makePerson('triage', 'change-ends');
		const here = new Browserish(base);
		const there = new Browserish(base);
		await here.signIn(p.email, p.password);
		await there.signIn(p.email, p.password);
		const token = await newToken(here, 'before change');
		const pending = await resetLink(p.email);

		const changed = await here.postForm('/settings?/password', {
			current: p.password,
			password: 'changed-pass-1234',
			confirm: 'changed-pass-1234',
			revokeTokens: 'on'
		});
		expect(changed.status).toBe(200);
		expect(await changed.text()).toContain('One API token was');
		expect((await here.get('/runs')).status).toBe(200);
		expect((await there.get('/runs')).status).toBe(303);
		expect(await tokenWorks(token)).toBe(false);
		const stale = await new Browserish(base).postForm(pending, {
			password: 'attacker-pass-1234',
			confirm: 'attacker-pass-1234'
		});
		expect(stale.status).toBe(400);

		// without the box ticked, the tokens stay
		const kept = await newToken(here, 'kept');
		const again = await here.postForm('/settings?/password', {
			current: 'changed-pass-1234',
			password: 'changed-again-1234',
			confirm: 'changed-again-1234'
		});
		expect(again.status).toBe(200);
		expect(await tokenWorks(kept)).toBe(true);
	});

	it('the current-password check on the change form is throttled like sign-in', async () => {
		const p = await makePerson('viewer', 'change-throttle');
		const c = new Browserish(base);
		await c.signIn(p.email, p.password);
		const attempt = (current: string) =>
			c.postForm('/settings?/password', {
				current,
				password: 'guessed-pass-1234',
				confirm: 'guessed-pass-1234'
			});
		for (let i = 0; i < 5; i++) expect((await attempt(`wrong-guess-${i}`)).status).toBe(400);
		const right = await attempt(p.password);
		expect(right.status).toBe(429);
		expect(await right.text()).toContain('Too many failed sign-ins for this account');
		const [row] = await db().select().from(schema.users).where(eq(schema.users.id, p.id));
		expect(await verifyPassword(row.passwordHash, p.password)).toBe(true);
	});
});

describe('the quarantine needs quarantine:read', () => {
	it('viewers and triage are refused it; engineers and operators read it', async () => {
		const runId = await streamRun(base, 'quarantine access', [
			{ t: 1_790_400_000, estimates: [{ id: 'a', x: [1, 2] }] }
		]);
		for (const [role, status] of [
			['viewer', 403],
			['triage', 403],
			['engineer', 200],
			['operator', 200]
		] as const) {
			const p = await makePerson(role, `quarantine-${role}`);
			const c = new Browserish(base);
			await c.signIn(p.email, p.password);
			const res = await c.json(`/api/runs/${runId}/quarantine`, 'GET');
			expect(res.status, role).toBe(status);
			// the run itself stays readable for everyone
			expect((await c.json(`/api/runs/${runId}`, 'GET')).status, role).toBe(200);
		}
	});
});

describe('the guard reads the form action SvelteKit runs', () => {
	const runId = '00000000-0000-4000-8000-000000000000';

	it('the first ?/name counts, not the last', async () => {
		const v = await makePerson('viewer', 'action-viewer');
		const t = await makePerson('triage', 'action-triage');
		const viewer = new Browserish(base);
		const triage = new Browserish(base);
		await viewer.signIn(v.email, v.password);
		await triage.signIn(t.email, t.password);
		// SvelteKit runs "pin" here: a viewer may not pin, a triage person may (and gets past the guard)
		expect((await viewer.postForm(`/runs/${runId}?/pin&/other`, {})).status).toBe(403);
		expect([403, 405]).not.toContain(
			(await triage.postForm(`/runs/${runId}?/pin&/other`, {})).status
		);
		// and the other way round: the action run is unknown, whatever comes after it
		expect((await triage.postForm(`/runs/${runId}?/other&/pin`, {})).status).toBe(405);
	});

	it('refuses an explicit ?/default, which SvelteKit would throw on (a 500)', async () => {
		expect((await admin.postForm('/settings?/default', {})).status).toBe(405);
		expect((await new Browserish(base).postForm('/sign-in?/default', {})).status).toBe(405);
	});
});

describe('/metrics and the trusted proxy', () => {
	it('without METRICS_TOKEN or METRICS_OPEN, a loopback caller must sign in like anyone', async () => {
		expect((await fetch(`${base}/metrics`)).status).toBe(401);
		const op = await makePerson('operator', 'metrics-op');
		const c = new Browserish(base);
		await c.signIn(op.email, op.password);
		const res = await c.get('/metrics');
		expect(res.status).toBe(200);
		expect(await res.text()).toContain('skein_http_request_duration_seconds');
	});

	describe('behind a proxy on the same host (ADDRESS_HEADER=x-forwarded-for)', () => {
		let proxied: RunningApp;
		const token = 'metrics-token-for-the-test-0123456789';

		beforeAll(async () => {
			proxied = await startApp({
				DATABASE_URL: process.env.DATABASE_URL!,
				ADDRESS_HEADER: 'x-forwarded-for',
				XFF_DEPTH: '1',
				METRICS_OPEN: 'loopback',
				METRICS_TOKEN: token,
				SIGNIN_MAX_PER_ADDRESS: '3'
			});
		});
		afterAll(async () => {
			await proxied?.stop();
		});

		const from = (address: string, extra: Record<string, string> = {}) => ({
			headers: { 'x-forwarded-for': address, ...extra }
		});

		it('/metrics: the forwarded address decides "loopback", and the token admits from anywhere', async () => {
			const m = `${proxied.url}/metrics`;
			expect((await fetch(m, from('203.0.113.7'))).status).toBe(401);
			expect((await fetch(m, from('127.0.0.1'))).status).toBe(200);
			const bearer = { authorization: `Bearer ${token}` };
			expect((await fetch(m, from('203.0.113.7', bearer))).status).toBe(200);
			const wrong = { authorization: `Bearer ${token}x` };
			expect((await fetch(m, from('203.0.113.7', wrong))).status).toBe(401);
		});

		it('a request that did not come through the proxy gets a 400, not a 500', async () => {
			const form = {
				method: 'POST',
				redirect: 'manual' as const,
				headers: {
					origin: proxied.url,
					accept: 'text/html',
					'content-type': 'application/x-www-form-urlencoded'
				},
				body: new URLSearchParams({ email: uniqueEmail('direct'), password: 'x' }).toString()
			};
			const direct = await fetch(`${proxied.url}/sign-in`, form);
			expect(direct.status).toBe(400);
			expect(await direct.text()).toContain('through its proxy');
			expect((await fetch(`${proxied.url}/api/me`)).status).toBe(400);
			expect((await fetch(`${proxied.url}/healthz`)).status).toBe(200);
		});

		it('the sign-in throttle counts each forwarded address on its own', async () => {
			const post = (address: string, email: string) =>
				fetch(`${proxied.url}/sign-in`, {
					method: 'POST',
					redirect: 'manual',
					headers: {
						'x-forwarded-for': address,
						origin: proxied.url,
						accept: 'text/html',
						'content-type': 'application/x-www-form-urlencoded'
					},
					body: new URLSearchParams({ email, password: 'not-the-password' }).toString()
				});
			// fresh addresses each run: failures stay counted for the throttle's window
			const octet = () => 1 + Math.floor(Math.random() * 250);
			const one = `198.51.${octet()}.${octet()}`;
			const other = `203.0.${octet()}.${octet()}`;
			for (let i = 0; i < 3; i++) expect((await post(one, uniqueEmail('xff'))).status).toBe(400);
			expect((await post(one, uniqueEmail('xff'))).status).toBe(429);
			expect((await post(other, uniqueEmail('xff'))).status).toBe(400);
			const rows = await db()
				.select({ ip: schema.auditLog.ip })
				.from(schema.auditLog)
				.where(eq(schema.auditLog.action, 'signin.throttled'));
			expect(rows.map((r) => r.ip)).toContain(one);
		});
	});
});
