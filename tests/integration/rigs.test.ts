/**
 * Rigs & keys: who may manage them (API and form actions), feed key secrets shown once, resolveFeedKey in every
 * state, revocation reaching other processes over NOTIFY, the audit trail, input errors and the CLI.
 */
import { spawnSync } from 'node:child_process';
import { randomBytes, randomUUID } from 'node:crypto';
import { resolve } from 'node:path';
import { eq, sql } from 'drizzle-orm';
import postgres from 'postgres';
import { afterAll, beforeAll, describe, expect, inject, it } from 'vitest';
import type { Role } from '$lib/permissions';
import { hashSecret } from '$server/auth/tokens';
import { db, schema } from '$server/db';
import {
	keyExpiryChannel,
	keyRevokedChannel,
	recordFeedKeyUse,
	resolveFeedKey
} from '$server/rigs';
import { testDatabaseUrl } from '../support/env';
import { Browserish } from '../support/client';
import { makePerson } from '../support/factories';

const root = resolve(import.meta.dirname, '../..');
const clients = {} as Record<Role, Browserish>;
let base: string;

interface ApiResult {
	status: number;
	body: Record<string, unknown> & {
		error?: { code: string; message: string; details?: Record<string, string> };
	};
	text: string;
}

interface KeyJson {
	id: string;
	prefix: string;
	label: string;
	expiresAt: string | null;
	secret?: string;
	status?: string;
	rotatedTo?: string | null;
}

async function call(role: Role, method: string, path: string, body?: unknown): Promise<ApiResult> {
	const res = await clients[role].json(path, method, body);
	const text = await res.text();
	return { status: res.status, body: text ? JSON.parse(text) : {}, text };
}

function rigName(tag = 'rig') {
	return `${tag}-${randomBytes(4).toString('hex')}`;
}

async function newRig(name = rigName()): Promise<{ id: string; name: string }> {
	const r = await call('operator', 'POST', '/api/rigs', { name, description: 'demo bench rig' });
	expect(r.status, r.text).toBe(201);
	return r.body.rig as { id: string; name: string };
}

async function newKey(
	rigId: string,
	body: Record<string, unknown> = {}
): Promise<KeyJson & { secret: string }> {
	const r = await call('operator', 'POST', `/api/rigs/${rigId}/keys`, body);
	expect(r.status, r.text).toBe(201);
	return (r.body as { key: KeyJson & { secret: string } }).key;
}

async function keyRow(id: string) {
	const [row] = await db().select().from(schema.feedKeys).where(eq(schema.feedKeys.id, id));
	return row;
}

async function rigRow(id: string) {
	const [row] = await db().select().from(schema.rigs).where(eq(schema.rigs.id, id));
	return row;
}

async function counts() {
	const [r] = await db()
		.select({
			rigs: sql<number>`(select count(*)::int from rigs)`,
			keys: sql<number>`(select count(*)::int from feed_keys)`
		})
		.from(sql`(select 1) as one`);
	return r;
}

function cli(...args: string[]) {
	const r = spawnSync(process.execPath, ['--import', 'tsx', 'tools/cli.ts', ...args], {
		cwd: root,
		encoding: 'utf8',
		env: process.env
	});
	return { code: r.status, out: r.stdout, err: r.stderr };
}

beforeAll(async () => {
	base = inject('appUrl');
	for (const role of ['admin', 'operator', 'engineer', 'triage', 'viewer'] as Role[]) {
		const p = await makePerson(role, `rigs-${role}`);
		clients[role] = new Browserish(base);
		await clients[role].signIn(p.email, p.password);
		expect(clients[role].cookies.has('skein_session'), `${role} signed in`).toBe(true);
	}
});

describe('managing rigs and keys', () => {
	it.each(['operator', 'admin'] as Role[])(
		'%s creates, renames, describes, archives a rig and manages its keys over the API',
		async (role) => {
			const name = rigName(role);
			const created = await call(role, 'POST', '/api/rigs', { name });
			expect(created.status, created.text).toBe(201);
			const rig = created.body.rig as {
				id: string;
				name: string;
				description: string;
				archivedAt: string | null;
			};
			expect(rig).toMatchObject({ name, description: '', archivedAt: null });

			const patched = await call(role, 'PATCH', `/api/rigs/${rig.id}`, {
				name: `${name}-b`,
				description: 'Roof lidar, front radar'
			});
			expect(patched.status, patched.text).toBe(200);
			expect(patched.body.rig).toMatchObject({
				name: `${name}-b`,
				description: 'Roof lidar, front radar'
			});

			const key = (
				await call(role, 'POST', `/api/rigs/${rig.id}/keys`, {
					label: 'logger',
					expiresAt: '2099-06-01T12:00:00Z'
				})
			).body.key as KeyJson;
			expect(key).toMatchObject({ label: 'logger', expiresAt: '2099-06-01T12:00:00.000Z' });
			expect(key.secret).toMatch(/^skf_[A-Za-z0-9_-]{32}$/);
			expect(key.prefix).toBe(key.secret!.slice(0, 10));

			const labelled = await call(role, 'PATCH', `/api/keys/${key.id}`, { label: 'trunk logger' });
			expect(labelled.status).toBe(200);
			expect((labelled.body.key as KeyJson).label).toBe('trunk logger');

			const rotated = await call(role, 'POST', `/api/keys/${key.id}/rotate`, { grace_minutes: 30 });
			expect(rotated.status, rotated.text).toBe(201);
			const fresh = rotated.body.key as KeyJson;
			expect(fresh.label).toBe('trunk logger');
			expect((rotated.body.previous as KeyJson).rotatedTo).toBe(fresh.id);

			const revoked = await call(role, 'POST', `/api/keys/${fresh.id}/revoke`);
			expect(revoked.status, revoked.text).toBe(200);
			expect((revoked.body.key as KeyJson).status).toBe('revoked');
			expect((await call(role, 'POST', `/api/keys/${fresh.id}/revoke`)).status).toBe(409);

			const archived = await call(role, 'PATCH', `/api/rigs/${rig.id}`, { archived: true });
			expect(archived.status).toBe(200);
			expect((archived.body.rig as { archivedAt: string | null }).archivedAt).not.toBeNull();
			expect((await call(role, 'POST', `/api/rigs/${rig.id}/keys`, {})).status).toBe(409);
			const back = await call(role, 'PATCH', `/api/rigs/${rig.id}`, { archived: false });
			expect((back.body.rig as { archivedAt: string | null }).archivedAt).toBeNull();

			const list = await call(role, 'GET', '/api/rigs');
			const listed = (
				list.body.rigs as { id: string; totalKeys: number; activeKeys: number }[]
			).find((r) => r.id === rig.id);
			expect(listed).toMatchObject({ totalKeys: 2, activeKeys: 1 });
			const keys = (await call(role, 'GET', `/api/rigs/${rig.id}/keys`)).body.keys as KeyJson[];
			expect(keys.map((k) => k.status).sort()).toEqual(['expiring', 'revoked']);
		}
	);

	it('lists rigs with their key counts and last activity, and keys with last use, address and frames', async () => {
		const rig = await newRig();
		const key = await newKey(rig.id, { label: 'roof' });
		await newKey(rig.id);
		const listed = () =>
			call('viewer', 'GET', '/api/rigs').then((r) =>
				(r.body.rigs as { id: string; lastActivityAt: string | null }[]).find(
					(x) => x.id === rig.id
				)
			);
		expect(await listed()).toMatchObject({ activeKeys: 2, totalKeys: 2, lastActivityAt: null });
		await recordFeedKeyUse(key.id, { ip: '10.20.30.40', frames: 1200 });
		await recordFeedKeyUse(key.id, { frames: 34 });
		const lastActivity = (await listed())!.lastActivityAt;
		expect(Date.now() - new Date(lastActivity!).getTime()).toBeLessThan(60_000);
		const shown = (await call('viewer', 'GET', `/api/keys/${key.id}`)).body.key as KeyJson & {
			lastUsedIp: string;
			framesReceived: number;
		};
		expect(shown).toMatchObject({
			lastUsedIp: '10.20.30.40',
			framesReceived: 1234,
			status: 'active'
		});
		const page = await (await clients.viewer.get(`/rigs/${rig.id}`)).text();
		expect(page).toContain('10.20.30.40');
		expect(page).toContain('1,234');
	});

	it('operator manages through the form actions; the new key is shown once on the page', async () => {
		const c = clients.operator;
		const name = rigName('form');
		const made = await c.postForm('/rigs?/create', { name, description: 'bench rig in lab 2' });
		expect(made.status).toBe(303);
		const location = made.headers.get('location')!;
		expect(location).toMatch(/^\/rigs\/[0-9a-f-]{36}$/);
		const rigId = location.split('/').at(-1)!;

		expect(
			(
				await c.postForm(`${location}?/details`, {
					name: `${name}-x`,
					description: 'moved to lab 3'
				})
			).status
		).toBe(200);
		expect(await rigRow(rigId)).toMatchObject({ name: `${name}-x`, description: 'moved to lab 3' });

		const keyPage = await c.postForm(`${location}?/createKey`, {
			label: 'lab PC',
			expiresAt: '2099-01-01T10:00'
		});
		expect(keyPage.status).toBe(200);
		const html = await keyPage.text();
		const secret = /data-testid="feed-key-secret"[^>]*>(skf_[A-Za-z0-9_-]{32})</.exec(html)?.[1];
		expect(secret, 'secret in the notice').toBeDefined();
		const resolved = await resolveFeedKey(secret!);
		expect(resolved.ok).toBe(true);
		const keyId = resolved.ok ? resolved.keyId : '';
		expect((await keyRow(keyId)).expiresAt?.toISOString()).toBe('2099-01-01T10:00:00.000Z');

		const later = await (await c.get(location)).text();
		expect(later).not.toContain(secret!);
		expect(later).toContain(secret!.slice(0, 10));
		expect(later).toContain('action="?/createKey"');

		expect(
			(await c.postForm(`${location}?/labelKey`, { id: keyId, label: 'lab PC 2' })).status
		).toBe(200);
		expect((await keyRow(keyId)).label).toBe('lab PC 2');
		const rotatedPage = await c.postForm(`${location}?/rotateKey`, {
			id: keyId,
			grace_minutes: '60'
		});
		expect(rotatedPage.status).toBe(200);
		expect(await rotatedPage.text()).toMatch(/data-testid="feed-key-secret"[^>]*>skf_/);
		expect((await keyRow(keyId)).rotatedTo).not.toBeNull();
		expect((await c.postForm(`${location}?/revokeKey`, { id: keyId })).status).toBe(200);
		expect((await keyRow(keyId)).revokedAt).not.toBeNull();
		expect((await c.postForm(`${location}?/archive`, { archived: 'true' })).status).toBe(200);
		expect((await rigRow(rigId)).archivedAt).not.toBeNull();

		const listPage = await (await c.get('/rigs')).text();
		expect(listPage).toContain(`${name}-x`);
		expect(listPage).toContain('action="?/create"');
	});

	describe.each(['engineer', 'triage', 'viewer'] as Role[])('%s', (role) => {
		let rig: { id: string; name: string };
		let key: KeyJson & { secret: string };

		beforeAll(async () => {
			rig = await newRig(rigName(`ro-${role}`));
			key = await newKey(rig.id, { label: 'kept' });
		});

		it('gets 403 on every API write and nothing changes', async () => {
			const writes: [string, string, unknown][] = [
				['POST', '/api/rigs', { name: rigName('nope') }],
				['PATCH', `/api/rigs/${rig.id}`, { name: 'renamed', archived: true }],
				['POST', `/api/rigs/${rig.id}/keys`, { label: 'x' }],
				['PATCH', `/api/keys/${key.id}`, { label: 'changed' }],
				['POST', `/api/keys/${key.id}/revoke`, {}],
				['POST', `/api/keys/${key.id}/rotate`, { grace_minutes: 0 }]
			];
			const before = await counts();
			for (const [method, path, body] of writes) {
				const r = await call(role, method, path, body);
				expect(r.status, `${method} ${path}`).toBe(403);
				expect(r.body.error?.code).toBe('forbidden');
			}
			expect(await counts()).toEqual(before);
			expect(await rigRow(rig.id)).toMatchObject({ name: rig.name, archivedAt: null });
			expect(await keyRow(key.id)).toMatchObject({
				label: 'kept',
				revokedAt: null,
				rotatedTo: null
			});
		});

		it('gets 403 on every form action and nothing changes', async () => {
			const c = clients[role];
			const posts: [string, Record<string, string>][] = [
				['/rigs?/create', { name: rigName('nope') }],
				[`/rigs/${rig.id}?/details`, { name: 'renamed', description: '' }],
				[`/rigs/${rig.id}?/archive`, { archived: 'true' }],
				[`/rigs/${rig.id}?/createKey`, { label: 'x' }],
				[`/rigs/${rig.id}?/labelKey`, { id: key.id, label: 'changed' }],
				[`/rigs/${rig.id}?/revokeKey`, { id: key.id }],
				[`/rigs/${rig.id}?/rotateKey`, { id: key.id, grace_minutes: '0' }]
			];
			const before = await counts();
			for (const [path, fields] of posts)
				expect((await c.postForm(path, fields)).status, path).toBe(403);
			expect(await counts()).toEqual(before);
			expect(await rigRow(rig.id)).toMatchObject({ name: rig.name, archivedAt: null });
			expect(await keyRow(key.id)).toMatchObject({ label: 'kept', revokedAt: null });
		});

		it('reads the pages and the API without any forms', async () => {
			const c = clients[role];
			const list = await c.get('/rigs');
			expect(list.status).toBe(200);
			const listHtml = await list.text();
			expect(listHtml).toContain(rig.name);
			expect(listHtml).not.toContain('?/create');
			const page = await c.get(`/rigs/${rig.id}`);
			expect(page.status).toBe(200);
			const html = await page.text();
			expect(html).toContain(key.prefix);
			expect(html).not.toMatch(/action="\?\//);
			expect((await call(role, 'GET', `/api/rigs/${rig.id}`)).status).toBe(200);
			expect((await call(role, 'GET', `/api/keys/${key.id}`)).status).toBe(200);
		});
	});
});

describe('feed key secrets', () => {
	it('are returned once, never listed, and stored only as a keyed hash', async () => {
		const rig = await newRig();
		const key = await newKey(rig.id, { label: 'once' });
		const row = await keyRow(key.id);
		expect(row.keyHash).not.toBe(key.secret);
		expect(row.keyHash).not.toContain(key.secret);
		expect(row.keyHash).toBe(hashSecret(key.secret));
		expect(row.prefix).toBe(key.prefix);
		for (const path of [
			'/api/rigs',
			`/api/rigs/${rig.id}`,
			`/api/rigs/${rig.id}/keys`,
			`/api/keys/${key.id}`
		]) {
			const r = await call('admin', 'GET', path);
			expect(r.status, path).toBe(200);
			expect(r.text, path).not.toContain(key.secret);
			expect(r.text, path).not.toContain(row.keyHash);
			expect(r.text, path).not.toMatch(/keyHash|key_hash|"secret"/);
		}
		const page = await (await clients.admin.get(`/rigs/${rig.id}`)).text();
		expect(page).not.toContain(key.secret);
		expect(page).not.toContain(row.keyHash);
	});
});

describe('resolveFeedKey', () => {
	it('accepts a working key and names the rig', async () => {
		const rig = await newRig();
		const key = await newKey(rig.id);
		expect(await resolveFeedKey(key.secret)).toEqual({
			ok: true,
			rigId: rig.id,
			keyId: key.id,
			expiresAt: null
		});
	});

	it('refuses unknown, revoked, expired and archived-rig keys with a one-line reason', async () => {
		expect(await resolveFeedKey(`skf_${'x'.repeat(32)}`)).toEqual({
			ok: false,
			reason: 'unknown feed key'
		});
		expect(await resolveFeedKey('not even a key')).toEqual({
			ok: false,
			reason: 'unknown feed key'
		});

		const rig = await newRig();
		const revoked = await newKey(rig.id);
		await call('operator', 'POST', `/api/keys/${revoked.id}/revoke`);
		expect(await resolveFeedKey(revoked.secret)).toEqual({ ok: false, reason: 'feed key revoked' });

		const expired = await newKey(rig.id, {
			expiresAt: new Date(Date.now() + 3600_000).toISOString()
		});
		expect((await resolveFeedKey(expired.secret)).ok).toBe(true);
		await db()
			.update(schema.feedKeys)
			.set({ expiresAt: new Date(Date.now() - 1000) })
			.where(eq(schema.feedKeys.id, expired.id));
		expect(await resolveFeedKey(expired.secret)).toEqual({ ok: false, reason: 'feed key expired' });
		expect(
			((await call('operator', 'GET', `/api/keys/${expired.id}`)).body.key as KeyJson).status
		).toBe('expired');

		const working = await newKey(rig.id);
		await call('operator', 'PATCH', `/api/rigs/${rig.id}`, { archived: true });
		expect(await resolveFeedKey(working.secret)).toEqual({ ok: false, reason: 'rig archived' });
		await call('operator', 'PATCH', `/api/rigs/${rig.id}`, { archived: false });
		expect((await resolveFeedKey(working.secret)).ok).toBe(true);
	});

	it('keeps a rotated key working through its grace period and not after', async () => {
		const rig = await newRig();
		const old = await newKey(rig.id, { label: 'roof' });
		const t0 = Date.now();
		const r = await call('operator', 'POST', `/api/keys/${old.id}/rotate`, { grace_minutes: 120 });
		const fresh = r.body.key as KeyJson & { secret: string };
		const row = await keyRow(old.id);
		expect(row.rotatedTo).toBe(fresh.id);
		expect(Math.abs(row.expiresAt!.getTime() - (t0 + 120 * 60_000))).toBeLessThan(10_000);
		// the old key resolves with its expiry, so a connection on it is closed when the grace period ends
		expect(await resolveFeedKey(old.secret)).toEqual({
			ok: true,
			rigId: rig.id,
			keyId: old.id,
			expiresAt: row.expiresAt!.getTime()
		});
		expect(await resolveFeedKey(fresh.secret)).toEqual({
			ok: true,
			rigId: rig.id,
			keyId: fresh.id,
			expiresAt: null
		});

		await db()
			.update(schema.feedKeys)
			.set({ expiresAt: new Date(Date.now() - 1000) })
			.where(eq(schema.feedKeys.id, old.id));
		expect(await resolveFeedKey(old.secret)).toEqual({ ok: false, reason: 'feed key expired' });
		expect((await resolveFeedKey(fresh.secret)).ok).toBe(true);
		expect(
			(await call('operator', 'POST', `/api/keys/${old.id}/rotate`, { grace_minutes: 5 })).status
		).toBe(409);
	});

	it('with no grace, stops the old key at once', async () => {
		const rig = await newRig();
		const old = await newKey(rig.id);
		expect(
			(await call('operator', 'POST', `/api/keys/${old.id}/rotate`, { grace_minutes: 0 })).status
		).toBe(201);
		expect(await resolveFeedKey(old.secret)).toEqual({ ok: false, reason: 'feed key expired' });
	});
});

describe('revocation over NOTIFY', () => {
	let listener: postgres.Sql;
	const heard: string[] = [];
	const expiries: string[] = [];

	beforeAll(async () => {
		listener = postgres(testDatabaseUrl(), { max: 1, onnotice: () => {} });
		await listener.listen(keyRevokedChannel, (payload) => heard.push(payload));
		await listener.listen(keyExpiryChannel, (payload) => expiries.push(payload));
	});

	afterAll(async () => {
		await listener.end({ timeout: 5 });
	});

	async function hears(keyId: string, withinMs = 1000) {
		const deadline = Date.now() + withinMs;
		while (!heard.includes(keyId) && Date.now() < deadline)
			await new Promise((r) => setTimeout(r, 20));
		return heard.includes(keyId);
	}

	it('announces a revoked key on its channel within a second', async () => {
		expect(keyRevokedChannel).toBe('skein_feed_key_revoked');
		const rig = await newRig();
		const key = await newKey(rig.id);
		const t0 = Date.now();
		expect((await call('operator', 'POST', `/api/keys/${key.id}/revoke`)).status).toBe(200);
		expect(await hears(key.id)).toBe(true);
		expect(Date.now() - t0).toBeLessThan(1000);
	});

	it('announces every working key of a rig that is archived, and not the revoked ones', async () => {
		const rig = await newRig();
		const a = await newKey(rig.id);
		const b = await newKey(rig.id);
		const gone = await newKey(rig.id);
		await call('operator', 'POST', `/api/keys/${gone.id}/revoke`);
		await hears(gone.id);
		heard.length = 0;
		expect(
			(await call('operator', 'PATCH', `/api/rigs/${rig.id}`, { archived: true })).status
		).toBe(200);
		expect(await hears(a.id)).toBe(true);
		expect(await hears(b.id)).toBe(true);
		expect(heard).not.toContain(gone.id);
	});

	it("announces the end of a rotated key's grace period, so open sockets on it close then", async () => {
		expect(keyExpiryChannel).toBe('skein_feed_key_expiry');
		const rig = await newRig();
		const key = await newKey(rig.id);
		expect(
			(await call('operator', 'POST', `/api/keys/${key.id}/rotate`, { grace_minutes: 10 })).status
		).toBe(201);
		const deadline = Date.now() + 1000;
		while (!expiries.some((e) => e.startsWith(key.id)) && Date.now() < deadline)
			await new Promise((r) => setTimeout(r, 20));
		const payload = expiries.find((e) => e.startsWith(key.id));
		expect(payload).toBe(`${key.id} ${(await keyRow(key.id)).expiresAt!.getTime()}`);
		expect(heard).not.toContain(key.id);
	});

	it('does not announce anything when a revoke is refused', async () => {
		const rig = await newRig();
		const key = await newKey(rig.id);
		expect((await call('viewer', 'POST', `/api/keys/${key.id}/revoke`)).status).toBe(403);
		expect(await hears(key.id, 300)).toBe(false);
	});
});

describe('audit trail', () => {
	it('records every rig and key action', async () => {
		const rig = await newRig(rigName('audited'));
		await call('operator', 'PATCH', `/api/rigs/${rig.id}`, {
			name: `${rig.name}-2`,
			description: 'new words'
		});
		const key = await newKey(rig.id);
		await call('operator', 'PATCH', `/api/keys/${key.id}`, { label: 'audited label' });
		const fresh = (
			await call('operator', 'POST', `/api/keys/${key.id}/rotate`, { grace_minutes: 15 })
		).body.key as KeyJson;
		await call('operator', 'POST', `/api/keys/${fresh.id}/revoke`);
		await call('operator', 'PATCH', `/api/rigs/${rig.id}`, { archived: true });
		await call('operator', 'PATCH', `/api/rigs/${rig.id}`, { archived: false });

		const a = schema.auditLog;
		const rows = await db()
			.select()
			.from(a)
			.where(
				sql`${a.details}->>'id' = ${rig.id} or ${a.details}->>'keyId' in (${key.id}, ${fresh.id})`
			);
		const actions = rows.map((r) => r.action);
		expect(actions).toEqual(
			expect.arrayContaining([
				'rig.create',
				'rig.rename',
				'rig.describe',
				'rig.archive',
				'rig.unarchive',
				'feed_key.create',
				'feed_key.label',
				'feed_key.rotate',
				'feed_key.revoke'
			])
		);
		expect(rows.every((r) => r.actorLabel.startsWith('rigs-operator'))).toBe(true);
		expect(JSON.stringify(rows)).not.toContain(key.secret);
	});
});

describe('bad input', () => {
	let rig: { id: string; name: string };
	let key: KeyJson & { secret: string };

	beforeAll(async () => {
		rig = await newRig(rigName('strict'));
		key = await newKey(rig.id, { label: 'steady' });
	});

	it.each([
		['POST', '/api/rigs', { name: '' }, 422, 'name', 'Enter a rig name'],
		['POST', '/api/rigs', { name: '   ' }, 422, 'name', 'Enter a rig name'],
		['POST', '/api/rigs', { name: 'x'.repeat(81) }, 422, 'name', 'At most 80 characters'],
		['POST', '/api/rigs', {}, 422, 'name', 'Enter a rig name'],
		['PATCH', 'RIG', {}, 422, '_', 'Send name'],
		['PATCH', 'RIG', { colour: 'red' }, 422, '_', ''],
		['PATCH', 'RIG', { archived: 'yes' }, 422, 'archived', 'true or false'],
		['POST', 'RIG/keys', { expiresAt: '2001-01-01T00:00:00Z' }, 422, 'expiresAt', 'in the future'],
		['POST', 'RIG/keys', { expiresAt: 'next tuesday' }, 422, 'expiresAt', 'date and time'],
		['POST', 'RIG/keys', { label: 'l'.repeat(81) }, 422, 'label', 'At most 80'],
		['POST', 'KEY/rotate', { grace_minutes: -1 }, 422, 'grace_minutes', '0 to 10080'],
		['POST', 'KEY/rotate', { grace_minutes: 10081 }, 422, 'grace_minutes', '0 to 10080'],
		['POST', 'KEY/rotate', { grace_minutes: 2.5 }, 422, 'grace_minutes', '0 to 10080'],
		['POST', 'KEY/rotate', {}, 422, 'grace_minutes', '0 to 10080'],
		['PATCH', 'KEY', { label: 42 }, 422, 'label', 'text']
	])('%s %s %j → %i with a field error', async (method, target, body, status, field, message) => {
		const path = target.startsWith('RIG')
			? target.replace('RIG', `/api/rigs/${rig.id}`)
			: target.startsWith('KEY')
				? target.replace('KEY', `/api/keys/${key.id}`)
				: target;
		const before = await counts();
		const r = await call('operator', method, path, body);
		expect(r.status, r.text).toBe(status);
		expect(r.body.error?.code).toBe('invalid');
		if (field !== '_' || message)
			expect(r.body.error?.details?.[field] ?? r.body.error?.message).toContain(message);
		expect(await counts()).toEqual(before);
		expect(await rigRow(rig.id)).toMatchObject({ name: rig.name, archivedAt: null });
		expect(await keyRow(key.id)).toMatchObject({
			label: 'steady',
			revokedAt: null,
			rotatedTo: null,
			expiresAt: null
		});
	});

	it('refuses a duplicate rig name, ignoring case, with 409 (API and form)', async () => {
		const before = await counts();
		const r = await call('operator', 'POST', '/api/rigs', { name: rig.name.toUpperCase() });
		expect(r.status).toBe(409);
		expect(r.body.error).toMatchObject({
			code: 'conflict',
			details: { name: expect.stringContaining('already exists') }
		});
		const other = await newRig();
		expect(
			(await call('operator', 'PATCH', `/api/rigs/${other.id}`, { name: ` ${rig.name} ` })).status
		).toBe(409);
		const form = await clients.operator.postForm('/rigs?/create', { name: rig.name });
		expect(form.status).toBe(409);
		expect(await form.text()).toContain('already exists');
		expect((await counts()).rigs).toBe(before.rigs + 1);
	});

	it('answers bad JSON with 400', async () => {
		for (const [method, path] of [
			['POST', '/api/rigs'],
			['PATCH', `/api/rigs/${rig.id}`],
			['POST', `/api/rigs/${rig.id}/keys`],
			['PATCH', `/api/keys/${key.id}`],
			['POST', `/api/keys/${key.id}/rotate`]
		]) {
			const r = await call('operator', method, path, '{"name": ');
			expect(r.status, path).toBe(400);
			expect(r.body.error).toEqual({ code: 'bad_request', message: 'The body must be JSON' });
		}
	});

	it('answers unknown ids with 404', async () => {
		const before = await counts();
		for (const id of [randomUUID(), 'A'.repeat(20)]) {
			for (const [method, path, body] of [
				['GET', `/api/rigs/${id}`, undefined],
				['PATCH', `/api/rigs/${id}`, { name: 'ghost' }],
				['GET', `/api/rigs/${id}/keys`, undefined],
				['POST', `/api/rigs/${id}/keys`, { label: 'ghost' }],
				['GET', `/api/keys/${id}`, undefined],
				['PATCH', `/api/keys/${id}`, { label: 'ghost' }],
				['POST', `/api/keys/${id}/revoke`, undefined],
				['POST', `/api/keys/${id}/rotate`, { grace_minutes: 10 }]
			] as [string, string, unknown][]) {
				const r = await call('operator', method, path, body);
				expect(r.status, `${method} ${path}`).toBe(404);
				expect(r.body.error?.code).toBe('not_found');
			}
			expect((await clients.operator.get(`/rigs/${id}`)).status).toBe(404);
		}
		expect(await counts()).toEqual(before);
	});

	it('shows form field errors and changes nothing', async () => {
		const c = clients.operator;
		const before = await counts();
		const empty = await c.postForm('/rigs?/create', { name: '' });
		expect(empty.status).toBe(400);
		expect(await empty.text()).toContain('Enter a rig name');
		const past = await c.postForm(`/rigs/${rig.id}?/createKey`, {
			label: 'late',
			expiresAt: '2001-01-01T00:00'
		});
		expect(past.status).toBe(400);
		expect(await past.text()).toContain('Expiry must be in the future');
		const grace = await c.postForm(`/rigs/${rig.id}?/rotateKey`, {
			id: key.id,
			grace_minutes: '99999'
		});
		expect(grace.status).toBe(400);
		expect(await grace.text()).toContain('Grace period must be');
		const otherRig = await newRig();
		const foreign = await c.postForm(`/rigs/${otherRig.id}?/revokeKey`, { id: key.id });
		expect(foreign.status).toBe(404);
		expect((await counts()).keys).toBe(before.keys);
		expect(await keyRow(key.id)).toMatchObject({ revokedAt: null, rotatedTo: null });
	});
});

describe('npm run cli -- keys', () => {
	it('creates the rig and a key, prints the key alone on the last line, lists and revokes it', async () => {
		const name = rigName('cli');
		const made = cli(
			'keys',
			'create',
			'--rig',
			name,
			'--label',
			'bench PC',
			'--expires',
			'2099-01-01T00:00:00Z'
		);
		expect(made.code, made.err).toBe(0);
		const secret = made.out.trim().split('\n').at(-1)!;
		expect(secret).toMatch(/^skf_[A-Za-z0-9_-]{32}$/);
		const resolved = await resolveFeedKey(secret);
		expect(resolved.ok).toBe(true);
		const keyId = resolved.ok ? resolved.keyId : '';
		expect((await call('viewer', 'GET', '/api/rigs')).text).toContain(name);

		const again = cli('keys', 'create', '--rig', name.toUpperCase());
		expect(again.code, again.err).toBe(0);
		const list = cli('keys', 'list', '--rig', name);
		expect(list.code).toBe(0);
		const lines = list.out.trim().split('\n');
		expect(lines).toHaveLength(2);
		expect(lines).toContain(
			[name, keyId, secret.slice(0, 10), 'bench PC', 'active', 'never'].join('\t')
		);

		const revoked = cli('keys', 'revoke', '--prefix', secret.slice(0, 10));
		expect(revoked.code, revoked.err).toBe(0);
		expect(await resolveFeedKey(secret)).toEqual({ ok: false, reason: 'feed key revoked' });
		const again2 = cli('keys', 'revoke', '--id', keyId);
		expect(again2.code).toBe(1);
		expect(again2.err).toContain('already revoked');
	});

	it.each([
		[['keys'], 2, 'unknown command'],
		[['keys', 'fly'], 2, 'unknown command'],
		[['keys', 'create'], 2, '--rig is required'],
		[['keys', 'create', '--rig', 'x'.repeat(81)], 2, 'At most 80'],
		[['keys', 'create', '--rig', 'r', '--expires', '2001-01-01T00:00:00Z'], 2, 'in the future'],
		[['keys', 'create', '--rig', 'r', '--expires', 'soon'], 2, 'date and time'],
		[['keys', 'create', '--rig', 'r', '--colour', 'red'], 2, 'Unknown option'],
		[['keys', 'revoke'], 2, 'exactly one of --id or --prefix'],
		[['keys', 'revoke', '--id', 'abc', '--prefix', 'skf_'], 2, 'exactly one of --id or --prefix'],
		[['keys', 'revoke', '--id', 'not-a-uuid'], 2, '--id'],
		[['keys', 'revoke', '--id', '00000000-0000-4000-8000-000000000000'], 1, 'no feed key'],
		[['keys', 'revoke', '--prefix', 'skf_nothere'], 1, 'no feed key'],
		[['keys', 'list', '--rig', 'no-such-rig-anywhere'], 1, 'no rig named']
	])('refuses %j with exit %i and a clear message', async (args, code, message) => {
		const before = await counts();
		const r = cli(...(args as string[]));
		expect(r.code, r.err + r.out).toBe(code);
		expect(r.err + r.out).toContain(message);
		expect(await counts()).toEqual(before);
	});
});
