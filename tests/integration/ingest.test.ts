/**
 * Ingest protocol v1 against the real app, real sockets and PostgreSQL: what is acknowledged is stored,
 * exactly once, and reads back as sent (absent and empty sets apart); bad input is quarantined.
 */
import { spawnSync } from 'node:child_process';
import { resolve } from 'node:path';
import { beforeAll, describe, expect, inject, it } from 'vitest';
import WebSocket from 'ws';
import { SkeinRigClient } from '$lib/protocol/client';
import type { Frame } from '$lib/protocol/types';
import { sqlClient } from '$server/db';
import { Browserish } from '../support/client';
import { makePerson } from '../support/factories';
import { makeRigWithKey } from '../support/rigs';

let base: string;
let wsUrl: string;
let viewer: Browserish;
/** the quarantine needs quarantine:read, which viewers lack */
let engineer: Browserish;

const run = {
	name: 'junction pass',
	state_fields: ['x', 'y', 'vx', 'vy'],
	measurement_fields: ['x', 'y']
};

beforeAll(async () => {
	base = inject('appUrl');
	wsUrl = base.replace('http', 'ws') + '/ingest/v1';
	const p = await makePerson('viewer', 'ingest-reader');
	viewer = new Browserish(base);
	await viewer.signIn(p.email, p.password);
	const e = await makePerson('engineer', 'ingest-quarantine-reader');
	engineer = new Browserish(base);
	await engineer.signIn(e.email, e.password);
});

function frameAt(i: number, t0: number): Omit<Frame, 'seq'> {
	const base: Omit<Frame, 'seq'> = {
		t: t0 + i * 0.05,
		ego: { x: i * 0.5, y: 0, heading: 0.01 * i },
		measurements: [{ z: [10 + i * 0.1, 2], sensor: 'front-radar' }],
		estimates: [
			{
				id: 'e1',
				x: [10 + i * 0.1, 2, 2, 0],
				P: [1, 0.1, 0, 0, 0.1, 1, 0, 0, 0, 0, 0.5, 0, 0, 0, 0, 0.5],
				r: 0.9
			},
			{ id: 7, x: [30, -3, 0, 0], r: 0.4 }
		],
		truth: [{ id: 't1', x: [10 + i * 0.1, 2.05, 2, 0] }]
	};
	// absent and empty sets must stay apart
	if (i % 5 === 1) delete base.truth;
	if (i % 5 === 2) base.measurements = [];
	if (i % 5 === 3) delete base.ego;
	return base;
}

async function stored(runId: string) {
	const res = await viewer.json(`/api/runs/${runId}/frames?limit=5000`, 'GET');
	expect(res.status).toBe(200);
	return (await res.json()) as {
		frames: (Frame & Record<string, unknown>)[];
		next_from_seq: number | null;
	};
}

describe('ingest into PostgreSQL', () => {
	it('streams with the client (MessagePack), reads back exactly, with per-frame metrics', async () => {
		const rig = await makeRigWithKey('ingest');
		const client = new SkeinRigClient({ url: wsUrl, key: rig.secret, clientRunId: 'drive-1', run });
		const { runId } = await client.start();
		const t0 = 1_790_000_000;
		const sent = Array.from({ length: 300 }, (_, i) => frameAt(i, t0));
		for (const f of sent) client.send(f);
		const closed = await client.close();
		expect(closed).toEqual({ run_id: runId, frames: 300 });

		const back = await stored(runId);
		expect(back.frames).toHaveLength(300);
		back.frames.forEach((f, i) => expect(f).toEqual({ seq: i, ...sent[i] }));
		expect('truth' in back.frames[1]).toBe(false);
		expect(back.frames[2].measurements).toEqual([]);

		const runRes = (await (await viewer.json(`/api/runs/${runId}`, 'GET')).json()) as {
			run: Record<string, unknown>;
		};
		expect(runRes.run).toMatchObject({
			status: 'ended',
			frame_count: 300,
			next_seq: 300,
			rig_name: rig.rigName
		});
		expect(runRes.run.frame_rate_hz as number).toBeCloseTo(20, 5);

		const rows = await sqlClient()<
			{
				n_truth: number | null;
				gospa: number | null;
				n_measurements: number | null;
				cardinality_sd: number | null;
			}[]
		>`select n_truth, gospa, n_measurements, cardinality_sd from frames where run_id = ${runId} order by seq limit 3`;
		// multi-Bernoulli cardinality variance Σ r(1 − r) (Poisson-binomial variance, standard result): r = 0.9 and 0.4
		expect(rows[0].cardinality_sd).toBeCloseTo(Math.sqrt(0.9 * 0.1 + 0.4 * 0.6), 12);
		expect(rows[0].n_truth).toBe(1);
		expect(rows[0].gospa).toBeGreaterThan(0);
		expect(rows[1].n_truth).toBeNull(); // truth not reported
		expect(rows[1].gospa).toBeNull();
		expect(rows[2].n_measurements).toBe(0); // reported and empty
		const [key] = await sqlClient()<
			{ frames_received: number; last_used_at: Date | null; last_used_ip: string | null }[]
		>`
			select frames_received::int, last_used_at, last_used_ip from feed_keys where id = ${rig.keyId}`;
		expect(key.frames_received).toBe(300);
		expect(key.last_used_at).not.toBeNull();
		expect(key.last_used_ip).toMatch(/127\.0\.0\.1/);
	});

	it('reads frames in pages, by seq and by time, in JSON and MessagePack', async () => {
		const rig = await makeRigWithKey('pages');
		const client = new SkeinRigClient({
			url: wsUrl,
			key: rig.secret,
			clientRunId: 'p',
			run,
			encoding: 'json'
		});
		const { runId } = await client.start();
		const t0 = 1_790_000_100;
		for (let i = 0; i < 50; i++) client.send(frameAt(i, t0));
		await client.close();
		const page = (await (
			await viewer.json(`/api/runs/${runId}/frames?from_seq=10&to_seq=30&limit=15`, 'GET')
		).json()) as {
			frames: Frame[];
			next_from_seq: number;
		};
		expect(page.frames.map((f) => f.seq)).toEqual(Array.from({ length: 15 }, (_, i) => 10 + i));
		expect(page.next_from_seq).toBe(25);
		const byTime = (await (
			await viewer.json(`/api/runs/${runId}/frames?from=${t0 + 1}&to=${t0 + 1.2}`, 'GET')
		).json()) as { frames: Frame[] };
		expect(byTime.frames.map((f) => f.seq)).toEqual([20, 21, 22, 23, 24]);
		const mp = await viewer.request(`/api/runs/${runId}/frames?to_seq=4`, {
			headers: { accept: 'application/x-msgpack' }
		});
		expect(mp.headers.get('content-type')).toBe('application/x-msgpack');
		const { decode } = await import('msgpackr');
		expect(
			(decode(new Uint8Array(await mp.arrayBuffer())) as { frames: Frame[] }).frames
		).toHaveLength(5);
		for (const bad of [
			'from_seq=-1',
			'limit=0',
			'from_seq=5&to_seq=2',
			'from=abc',
			'limit=99999'
		]) {
			const r = await viewer.json(`/api/runs/${runId}/frames?${bad}`, 'GET');
			expect(r.status, bad).toBe(422);
			expect(((await r.json()) as { error: { code: string } }).error.code).toBe('invalid');
		}
		expect(
			(await viewer.json(`/api/runs/00000000-0000-4000-8000-000000000000/frames`, 'GET')).status
		).toBe(404);
	});

	it('quarantines a bad frame raw with its reason, acknowledges its seq and keeps streaming', async () => {
		const rig = await makeRigWithKey('quarantine');
		const ws = new WebSocket(wsUrl, { headers: { authorization: `Bearer ${rig.secret}` } });
		const inbox: Record<string, unknown>[] = [];
		ws.on('message', (d) => inbox.push(JSON.parse(String(d)) as Record<string, unknown>));
		await new Promise((r) => ws.once('open', r));
		const next = async (pred: (m: Record<string, unknown>) => boolean) => {
			for (let i = 0; i < 200; i++) {
				const m = inbox.find(pred);
				if (m) return m;
				await new Promise((r) => setTimeout(r, 25));
			}
			throw new Error('no such message: ' + JSON.stringify(inbox));
		};
		ws.send(JSON.stringify({ type: 'open', client_run_id: 'q', run }));
		const opened = await next((m) => m.type === 'opened');
		const t = 1_790_000_200;
		ws.send(JSON.stringify({ type: 'frame', seq: 0, t, estimates: [] }));
		const bad = {
			type: 'frame',
			seq: 1,
			t: t + 0.05,
			estimates: [{ x: [1, 2, 3, 4], P: new Array(15).fill(0) }]
		};
		ws.send(JSON.stringify(bad));
		ws.send(JSON.stringify({ type: 'frame', seq: 2, t: t + 0.1, truth: [] }));
		const err = await next((m) => m.type === 'error');
		expect(err).toMatchObject({
			code: 'invalid_frame',
			seq: 1,
			message: 'estimates[0].P: length 15, expected 16'
		});
		await next((m) => m.type === 'ack' && m.seq === 2);
		ws.send(JSON.stringify({ type: 'close' }));
		await next((m) => m.type === 'closed');
		ws.close();
		const runId = opened.run_id as string;
		const back = await stored(runId);
		expect(back.frames.map((f) => f.seq)).toEqual([0, 2]);
		const q = (await (await engineer.json(`/api/runs/${runId}/quarantine`, 'GET')).json()) as {
			quarantine: { seq: number; reason: string; raw_base64: string }[];
		};
		expect(q.quarantine).toHaveLength(1);
		expect(q.quarantine[0].seq).toBe(1);
		expect(q.quarantine[0].reason).toContain('estimates[0].P: length 15, expected 16');
		expect(JSON.parse(Buffer.from(q.quarantine[0].raw_base64, 'base64').toString())).toEqual(bad);
	});

	it('refuses unknown, expired and revoked keys with 401 and a reason; revocation closes a live socket', async () => {
		const refused = (key: string) =>
			new Promise<{ status: number; body: string }>((resolve) => {
				const ws = new WebSocket(wsUrl, { headers: { authorization: `Bearer ${key}` } });
				ws.on('unexpected-response', (_req, res) => {
					let body = '';
					res.on('data', (c) => (body += c));
					res.on('end', () => resolve({ status: res.statusCode ?? 0, body }));
				});
				ws.on('error', () => {});
			});
		expect(await refused('skf_' + 'x'.repeat(32))).toMatchObject({
			status: 401,
			body: 'unknown feed key\n'
		});
		const expired = await makeRigWithKey('expired', { expiresAt: new Date(Date.now() - 1000) });
		expect((await refused(expired.secret)).body).toBe('feed key expired\n');

		const rig = await makeRigWithKey('revoke');
		const ws = new WebSocket(wsUrl, { headers: { authorization: `Bearer ${rig.secret}` } });
		await new Promise((r) => ws.once('open', r));
		const closed = new Promise<{ code: number; reason: string; at: number }>((r) =>
			ws.once('close', (code, reason) => r({ code, reason: String(reason), at: Date.now() }))
		);
		const sql = sqlClient();
		const revokedAt = Date.now();
		await sql.begin(async (tx) => {
			await tx`update feed_keys set revoked_at = now() where id = ${rig.keyId}`;
			await tx`select pg_notify('skein_feed_key_revoked', ${rig.keyId})`;
		});
		const c = await closed;
		expect(c.code).toBe(4001);
		expect(c.reason).toBe('key revoked');
		expect(c.at - revokedAt).toBeLessThan(1000);
		expect((await refused(rig.secret)).body).toBe('feed key revoked\n');
	});

	it('closes a socket when its key expires while it is connected, and when a rotation ends its grace', async () => {
		const closedAt = (ws: WebSocket) =>
			new Promise<{ code: number; reason: string; at: number }>((r) =>
				ws.once('close', (code, reason) => r({ code, reason: String(reason), at: Date.now() }))
			);
		const expiresAt = Date.now() + 1500;
		const rig = await makeRigWithKey('expiring', { expiresAt: new Date(expiresAt) });
		const ws = new WebSocket(wsUrl, { headers: { authorization: `Bearer ${rig.secret}` } });
		await new Promise((r) => ws.once('open', r));
		const c = await closedAt(ws);
		expect(c).toMatchObject({ code: 4001, reason: 'key expired' });
		expect(c.at).toBeGreaterThanOrEqual(expiresAt - 50);
		expect(c.at - expiresAt).toBeLessThan(1000);

		// a rotation with grace announces the old key's expiry (rigs.test.ts); here the announcement alone
		const other = await makeRigWithKey('rotating');
		const ws2 = new WebSocket(wsUrl, { headers: { authorization: `Bearer ${other.secret}` } });
		await new Promise((r) => ws2.once('open', r));
		const closed2 = closedAt(ws2);
		const graceEnd = Date.now() + 800;
		const sql = sqlClient();
		await sql.begin(async (tx) => {
			await tx`update feed_keys set expires_at = ${new Date(graceEnd)} where id = ${other.keyId}`;
			await tx`select pg_notify('skein_feed_key_expiry', ${`${other.keyId} ${graceEnd}`})`;
		});
		const c2 = await closed2;
		expect(c2).toMatchObject({ code: 4001, reason: 'key expired' });
		expect(c2.at).toBeGreaterThanOrEqual(graceEnd - 50);
		expect(c2.at - graceEnd).toBeLessThan(1000);
	});

	it('stores a batch exactly once even when it is committed twice (binary COPY falls back to insert-or-skip)', async () => {
		// run in plain Node: postgres.js parameter serialisation misbehaves inside Vitest's module runner
		const rig = await makeRigWithKey('twice');
		const r = spawnSync(
			process.execPath,
			['--import', 'tsx', 'tests/support/commit-twice.ts', rig.rigId, rig.keyId],
			{
				cwd: resolve(import.meta.dirname, '../..'),
				encoding: 'utf8',
				// rows computed inline here: the worker path is what every other ingest test goes through
				env: { ...process.env, INGEST_ROW_WORKER: 'off' }
			}
		);
		expect(r.status, r.stderr).toBe(0);
		const { runId, sent } = JSON.parse(r.stdout.trim().split('\n').at(-1)!) as {
			runId: string;
			sent: Frame[];
		};
		const rows = await sqlClient()<{ seq: number; n: number }[]>`
			select seq::int, count(*)::int as n from frames where run_id = ${runId} group by seq order by seq`;
		expect(rows).toEqual([
			{ seq: 0, n: 1 },
			{ seq: 1, n: 1 },
			{ seq: 2, n: 1 }
		]);
		const [run] = await sqlClient()<
			{ frame_count: number }[]
		>`select frame_count::int from runs where id = ${runId}`;
		expect(run.frame_count).toBe(3);
		expect((await stored(runId)).frames).toEqual(sent);
	});

	it('creates a missing day partition when a frame needs it', async () => {
		const rig = await makeRigWithKey('partition');
		const client = new SkeinRigClient({ url: wsUrl, key: rig.secret, clientRunId: 'old', run });
		const { runId } = await client.start();
		const t = Date.UTC(2019, 4, 17, 12) / 1000; // a day no partition was made for ahead of time
		client.send({ t, truth: [] });
		await client.close();
		const [p] = await sqlClient()<
			{ n: number }[]
		>`select count(*)::int as n from pg_class where relname = 'frames_20190517'`;
		expect(p.n).toBe(1);
		expect((await stored(runId)).frames).toHaveLength(1);
	});
});
