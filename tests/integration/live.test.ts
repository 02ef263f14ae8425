/**
 * The viewer socket against the real app, real sockets and PostgreSQL: refusals before any socket opens,
 * frames in order with their stored metrics once committed, latest-wins for a viewer that does not read
 * (bounded per-viewer outbox, skipped counts), state changes, and the Live board's summaries.
 */
import { randomUUID } from 'node:crypto';
import { afterAll, beforeAll, describe, expect, inject, it } from 'vitest';
import WebSocket from 'ws';
import { unpack } from '$lib/msgpack';
import { SkeinRigClient, type FrameInput } from '$lib/protocol/client';
import type { LiveStats } from '$lib/api-types';
import type {
	BoardMessage,
	HelloMessage,
	LiveFrameMessage,
	LiveServerMessage,
	StateMessage
} from '$lib/protocol/live';
import { sqlClient } from '$server/db';
import { startApp, type RunningApp } from '../support/app';
import { Browserish } from '../support/client';
import { makePerson } from '../support/factories';
import { makeRigWithKey } from '../support/rigs';

const run = {
	name: 'live follow',
	state_fields: ['x', 'y', 'vx', 'vy'],
	measurement_fields: ['x', 'y']
};

let base: string;
let viewer: Browserish;

beforeAll(async () => {
	base = inject('appUrl');
	const p = await makePerson('viewer', 'live-viewer');
	viewer = new Browserish(base);
	await viewer.signIn(p.email, p.password);
	expect(viewer.cookies.has('skein_session')).toBe(true);
});

const cookieOf = (b: Browserish) => [...b.cookies].map(([k, v]) => `${k}=${v}`).join('; ');
const wsBase = (httpBase: string) => httpBase.replace('http', 'ws');

interface Refusal {
	status: number;
	body: string;
}

/** A viewer socket that records every message; or the refusal when the upgrade is refused. */
class Watcher {
	messages: LiveServerMessage[] = [];
	closed: { code: number; reason: string } | null = null;
	#waiters: (() => void)[] = [];
	constructor(readonly ws: WebSocket) {
		ws.on('message', (d) => {
			this.messages.push(unpack(d as Buffer) as LiveServerMessage);
			this.#wake();
		});
		ws.on('close', (code, reason) => {
			this.closed = { code, reason: reason.toString() };
			this.#wake();
		});
	}
	#wake() {
		for (const w of this.#waiters.splice(0)) w();
	}
	frames(): LiveFrameMessage[] {
		return this.messages.filter((m): m is LiveFrameMessage => m.type === 'frame');
	}
	async until(test: () => boolean, ms = 20_000) {
		const deadline = Date.now() + ms;
		while (!test()) {
			if (Date.now() > deadline)
				throw new Error(`timed out; got ${this.messages.map((m) => m.type).join(',')}`);
			await new Promise<void>((r) => {
				this.#waiters.push(r);
				setTimeout(r, 200);
			});
		}
	}
}

function watch(httpBase: string, path: string, cookie: string | null): Promise<Watcher | Refusal> {
	return new Promise((resolve, reject) => {
		const ws = new WebSocket(wsBase(httpBase) + path, {
			headers: cookie ? { cookie } : {},
			perMessageDeflate: false
		});
		const w = new Watcher(ws);
		ws.once('open', () => resolve(w));
		ws.once('unexpected-response', (_req, res) => {
			let body = '';
			res.on('data', (c: Buffer) => (body += c));
			res.on('end', () => resolve({ status: res.statusCode ?? 0, body }));
		});
		ws.once('error', reject);
	});
}

async function watcher(httpBase: string, path: string, cookie: string): Promise<Watcher> {
	const w = await watch(httpBase, path, cookie);
	if (!(w instanceof Watcher)) throw new Error(`refused: ${w.status} ${w.body}`);
	return w;
}

function frame(i: number, t0: number): FrameInput {
	return {
		t: t0 + i * 0.05,
		measurements: [{ z: [10 + i * 0.1, 2] }],
		estimates: [
			{
				id: 'e1',
				x: [10 + i * 0.1, 2, 2, 0],
				P: [1, 0, 0, 0, 0, 1, 0, 0, 0, 0, 1, 0, 0, 0, 0, 1],
				r: 0.9
			}
		],
		truth: [{ id: 't1', x: [10 + i * 0.1, 2.5, 2, 0] }]
	};
}

/** ~60 KB of MessagePack: 1,500 measurements and 300 estimates with covariances. */
function heavyFrame(i: number, t0: number): FrameInput {
	return {
		t: t0 + i * 0.05,
		measurements: Array.from({ length: 1500 }, (_, k) => ({ z: [k * 0.37 + i, k * 0.11 - i] })),
		estimates: Array.from({ length: 300 }, (_, k) => ({
			id: k,
			x: [k + i * 0.1, -k, 1.5, 0.5],
			P: [1, 0.1, 0, 0, 0.1, 1, 0, 0, 0, 0, 1, 0, 0, 0, 0, 1],
			r: 0.5
		}))
	};
}

async function stats(b: Browserish): Promise<LiveStats> {
	const res = await b.json('/api/live', 'GET');
	expect(res.status).toBe(200);
	return (await res.json()) as LiveStats;
}

describe('viewer socket: who may watch', () => {
	it('refuses without a session (401), with an unknown session (401) and for an unknown run (404), before any socket opens', async () => {
		const rig = await makeRigWithKey('live-auth');
		const client = new SkeinRigClient({
			url: wsBase(base) + '/ingest/v1',
			key: rig.secret,
			clientRunId: 'auth',
			run
		});
		const { runId } = await client.start();

		const none = await watch(base, `/live/${runId}`, null);
		expect(none).toMatchObject({ status: 401 });
		expect((none as Refusal).body.trim().split('\n')).toHaveLength(1);
		expect(await watch(base, `/live/${runId}`, 'skein_session=not-a-session')).toMatchObject({
			status: 401
		});
		expect(await watch(base, '/live', null)).toMatchObject({ status: 401 });
		expect(await watch(base, `/live/${randomUUID()}`, cookieOf(viewer))).toMatchObject({
			status: 404,
			body: 'no such run\n'
		});
		expect(await watch(base, '/live/not-an-id', cookieOf(viewer))).toMatchObject({ status: 404 });

		const ok = await watcher(base, `/live/${runId}`, cookieOf(viewer));
		await ok.until(() => ok.messages.length > 0);
		const hello = ok.messages[0] as HelloMessage;
		expect(hello).toMatchObject({
			type: 'hello',
			protocol: 1,
			run: { id: runId, rig: rig.rigName, state: 'live', state_fields: run.state_fields, frames: 0 }
		});
		ok.ws.close();
		await client.close();
	});

	it('a deactivated person is refused at the latest on reconnect', async () => {
		const p = await makePerson('engineer', 'live-leaver');
		const b = new Browserish(base);
		await b.signIn(p.email, p.password);
		const first = await watcher(base, '/live', cookieOf(b));
		await first.until(() => first.messages.some((m) => m.type === 'board'));
		first.ws.close();
		await sqlClient()`update users set active = false where id = ${p.id}`;
		expect(await watch(base, '/live', cookieOf(b))).toMatchObject({ status: 401 });
	});
});

describe('viewer socket: frames', () => {
	it('sends each committed frame in order, with the stored metrics, then "ended"; the board shows the run', async () => {
		const rig = await makeRigWithKey('live-order');
		const client = new SkeinRigClient({
			url: wsBase(base) + '/ingest/v1',
			key: rig.secret,
			clientRunId: 'order',
			run: { ...run, name: 'ordered pass' }
		});
		const { runId } = await client.start();
		const w = await watcher(base, `/live/${runId}`, cookieOf(viewer));
		const board = await watcher(base, '/live', cookieOf(viewer));
		await w.until(() => w.messages.length > 0);

		// every frame a viewer receives is already durable
		const sql = sqlClient();
		const durable: Promise<number>[] = [];
		w.ws.on('message', (d) => {
			const m = unpack(d as Buffer) as LiveServerMessage;
			if (m.type === 'frame')
				durable.push(
					sql<
						{ n: number }[]
					>`select count(*)::int as n from frames where run_id = ${runId} and seq = ${m.seq}`.then(
						(r) => r[0].n
					)
				);
		});

		const t0 = Date.now() / 1000;
		for (let i = 0; i < 60; i++) {
			client.send(frame(i, t0));
			if (i % 10 === 9) await new Promise((r) => setTimeout(r, 30));
		}
		await w.until(() => w.frames().some((f) => f.seq === 59));
		await board.until(() =>
			board.messages.some(
				(m) => m.type === 'board' && m.runs.some((r) => r.id === runId && r.seq === 59)
			)
		);
		await client.close();
		await w.until(() => w.closed !== null);

		// a viewer that keeps up gets every frame, also of batches committed together, in seq order
		const frames = w.frames();
		expect(frames.map((f) => f.seq)).toEqual(Array.from({ length: 60 }, (_, i) => i));
		expect(frames.every((f) => f.skipped === 0 && f.quarantined === 0)).toBe(true);
		expect(await Promise.all(durable)).toEqual(frames.map(() => 1));

		const last = frames.at(-1)!;
		expect(last.frame).toMatchObject({ seq: 59, t: t0 + 59 * 0.05, truth: [{ id: 't1' }] });
		expect(last.t).toBe(t0 + 59 * 0.05);
		expect(last.metrics).toMatchObject({
			n_measurements: 1,
			n_estimates: 1,
			n_truth: 1,
			gospa_missed: 0,
			gospa_false: 0
		});
		const [row] = await sql<
			{ gospa: number; expected_cardinality: number }[]
		>`select gospa, expected_cardinality from frames where run_id = ${runId} and seq = 59`;
		expect(last.metrics?.gospa).toBeCloseTo(row.gospa, 9);
		expect(last.metrics?.expected_cardinality).toBeCloseTo(row.expected_cardinality, 9);

		const states = w.messages.filter((m): m is StateMessage => m.type === 'state');
		expect(states.map((s) => s.state)).toEqual(['ended']);
		expect(w.messages.at(-1)).toMatchObject({ type: 'state', state: 'ended' });
		expect(w.closed).toMatchObject({ code: 1000, reason: 'run ended' });

		const tile = board.messages
			.filter((m): m is BoardMessage => m.type === 'board')
			.flatMap((m) => m.runs)
			.filter((r) => r.id === runId && r.seq === 59)[0];
		expect(tile).toMatchObject({
			name: 'ordered pass',
			rig: rig.rigName,
			n_measurements: 1,
			n_estimates: 1,
			n_truth: 1
		});
		expect(tile.fps).toBeGreaterThan(0);
		board.ws.close();
	});

	it('a viewer that never reads gets the newest frame and a skipped count; its outbox never holds more than one frame', async () => {
		const rig = await makeRigWithKey('live-slow');
		const client = new SkeinRigClient({
			url: wsBase(base) + '/ingest/v1',
			key: rig.secret,
			clientRunId: 'slow',
			run: { ...run, name: 'slow viewer' }
		});
		const { runId } = await client.start();
		const slow = await watcher(base, `/live/${runId}`, cookieOf(viewer));
		await slow.until(() => slow.messages.length > 0);
		slow.ws.pause(); // stops reading: the kernel's buffers fill, then ws's send callbacks stop

		const total = 240;
		const t0 = Date.now() / 1000;
		const seen: LiveStats['viewers'] = [];
		for (let i = 0; i < total; i++) {
			client.send(heavyFrame(i, t0));
			if (i % 20 === 19) {
				await client.flush();
				seen.push(...(await stats(viewer)).viewers.filter((v) => v.run === runId));
			}
		}
		await client.flush();
		const mine = (await stats(viewer)).viewers.filter((v) => v.run === runId);
		seen.push(...mine);
		expect(mine).toHaveLength(1);
		// bounded: one frame waiting at most (plus a state and a pong), and ws holds at most the message in flight
		for (const v of seen) {
			expect(v.pending).toBeLessThanOrEqual(3);
			expect(v.buffered).toBeLessThan(256 * 1024);
		}
		expect(mine[0].skipped).toBeGreaterThan(0);
		expect(mine[0].sent).toBeLessThan(total);

		slow.ws.resume();
		await client.close();
		await slow.until(() => slow.closed !== null, 30_000);
		const frames = slow.frames();
		expect(frames.length).toBeLessThan(total);
		expect(frames.length + frames.reduce((s, f) => s + f.skipped, 0)).toBe(total);
		expect(frames.some((f) => f.skipped > 0)).toBe(true);
		expect(frames.at(-1)!.seq).toBe(total - 1);
		expect(slow.messages.at(-1)).toMatchObject({ type: 'state', state: 'ended' });
	});
});

describe('viewer socket: run state', () => {
	let app: RunningApp;
	let person: Browserish;

	beforeAll(async () => {
		// a short grace period, so a rig that drops makes its run interrupted within a second
		app = await startApp({ INGEST_GRACE_SECONDS: '1' });
		const p = await makePerson('triage', 'live-state');
		person = new Browserish(app.url);
		await person.signIn(p.email, p.password);
	});
	afterAll(() => app?.stop());

	it('says "interrupted" when the rig drops and "live" when it resumes', async () => {
		const rig = await makeRigWithKey('live-state');
		const url = wsBase(app.url) + '/ingest/v1';
		const first = new SkeinRigClient({ url, key: rig.secret, clientRunId: 'drop', run });
		const { runId } = await first.start();
		const w = await watcher(app.url, `/live/${runId}`, cookieOf(person));
		const t0 = Date.now() / 1000;
		for (let i = 0; i < 5; i++) first.send(frame(i, t0));
		await first.flush();
		await w.until(() => w.frames().some((f) => f.seq === 4));
		first.abort();
		await w.until(
			() => w.messages.some((m) => m.type === 'state' && m.state === 'interrupted'),
			10_000
		);

		const again = new SkeinRigClient({ url, key: rig.secret, clientRunId: 'drop', run });
		const resumed = await again.start();
		expect(resumed).toEqual({ runId, nextSeq: 5 });
		again.send(frame(5, t0));
		await w.until(() => w.frames().some((f) => f.seq === 5));
		await again.close();
		await w.until(() => w.closed !== null);
		const states = w.messages
			.filter((m): m is StateMessage => m.type === 'state')
			.map((m) => m.state);
		expect(states).toEqual(['interrupted', 'live', 'ended']);
		const order = w.messages.map((m) =>
			m.type === 'frame' ? `f${m.seq}` : m.type === 'state' ? m.state : m.type
		);
		expect(order.indexOf('f4')).toBeLessThan(order.indexOf('interrupted'));
		expect(order.indexOf('live')).toBeLessThan(order.indexOf('f5'));
	});
});
