/**
 * Frames and opens the database would refuse for what they hold, over the real socket to the real app: each is
 * quarantined (or refused as invalid_open) with its reason, and the run goes on. None of them may close the
 * connection with 1011 "storage unavailable": that code tells a rig to retry, and retrying these never ends.
 */
import { Packr } from 'msgpackr';
import postgres from 'postgres';
import { afterEach, beforeAll, describe, expect, inject, it } from 'vitest';
import WebSocket from 'ws';
import { unpack } from '$lib/msgpack';
import { toMsgpack } from '$lib/protocol/codec';
import { sqlClient } from '$server/db';
import { refusedForContent } from '$server/ingest/refused';
import { PostgresIngestStore } from '$server/ingest/store';
import { makeRigWithKey } from '../support/rigs';

let wsUrl: string;
const packr = new Packr({ useRecords: false });
const run = { name: 'poison drive', state_fields: ['x', 'y'], measurement_fields: ['x', 'y'] };
const t0 = 1_790_000_500;

beforeAll(() => {
	wsUrl = inject('appUrl').replace('http', 'ws') + '/ingest/v1';
});

type Reply = Record<string, unknown>;

/** A rig's socket that keeps every reply, MessagePack or JSON, and how it closed. */
class Rig {
	ws: WebSocket;
	inbox: Reply[] = [];
	closed: { code: number; reason: string } | null = null;

	constructor(secret: string) {
		this.ws = new WebSocket(wsUrl, { headers: { authorization: `Bearer ${secret}` } });
		this.ws.on('message', (d, binary) => {
			const buf = d as Buffer;
			this.inbox.push((binary ? unpack(buf) : JSON.parse(buf.toString())) as Reply);
		});
		this.ws.on('close', (code, reason) => (this.closed = { code, reason: reason.toString() }));
	}

	async ready(): Promise<void> {
		if (this.ws.readyState !== WebSocket.OPEN) await new Promise((r) => this.ws.once('open', r));
	}

	send(msg: Record<string, unknown>, encoding: 'json' | 'msgpack'): void {
		this.ws.send(encoding === 'json' ? JSON.stringify(msg) : packr.pack(msg));
	}

	async next(what: string, pred: (m: Reply) => boolean): Promise<Reply> {
		for (let i = 0; i < 400; i++) {
			const m = this.inbox.find(pred);
			if (m) return m;
			if (this.closed) break;
			await new Promise((r) => setTimeout(r, 25));
		}
		throw new Error(
			`no ${what}; closed ${JSON.stringify(this.closed)}; got ${JSON.stringify(this.inbox)}`
		);
	}
}

let open: Rig[] = [];
afterEach(() => {
	for (const r of open) r.ws.terminate();
	open = [];
});

async function connect(): Promise<Rig> {
	const rig = await makeRigWithKey('poison');
	const r = new Rig(rig.secret);
	open.push(r);
	await r.ready();
	return r;
}

const est = (x: number[], extra: Record<string, unknown> = {}) => ({
	x,
	P: [1, 0.1, 0.1, 1],
	r: 0.8,
	...extra
});

/** Frames the database would refuse, each with the reason it must be quarantined with. */
const poison: {
	name: string;
	encoding: 'json' | 'msgpack';
	frame: (seq: number, t: number) => Record<string, unknown>;
	reason: string | RegExp;
}[] = [
	{
		name: 'device time in milliseconds (MessagePack, the fast path)',
		encoding: 'msgpack',
		frame: (seq, t) => ({ type: 'frame', seq, t: t * 1000, truth: [] }),
		reason: /^t: 1790000500\d+ looks like milliseconds \(2026-09-21 if so\); t is in seconds/
	},
	{
		name: 'device time in milliseconds (JSON)',
		encoding: 'json',
		frame: (seq, t) => ({ type: 'frame', seq, t: Math.round(t * 1000), estimates: [] }),
		reason: /^t: 1790000500\d+ looks like milliseconds/
	},
	{
		name: 'year 10000',
		encoding: 'json',
		frame: (seq) => ({ type: 'frame', seq, t: 253_402_300_800 }),
		reason: /^t: 253402300800 is outside years 1–9999/
	},
	{
		name: 'before year 1',
		encoding: 'msgpack',
		frame: (seq) => ({ type: 'frame', seq, t: -62_135_596_801 }),
		reason: /^t: -62135596801 is outside years 1–9999/
	},
	{
		name: 'far beyond any timestamp',
		encoding: 'msgpack',
		frame: (seq) => ({ type: 'frame', seq, t: 1e300 }),
		reason: /^t: 1e\+300 is outside years 1–9999/
	},
	{
		name: 'NUL in an unknown field name (JSON)',
		encoding: 'json',
		frame: (seq, t) => ({ type: 'frame', seq, t, 'co\0lour': 'red' }),
		reason: 'co\\u0000lour: unknown field'
	},
	{
		name: 'NUL in an unknown field name (MessagePack)',
		encoding: 'msgpack',
		frame: (seq, t) => ({ type: 'frame', seq, t, truth: [{ x: [1, 2], '\0': 1 }] }),
		reason: 'truth[0].\\u0000: unknown field'
	},
	{
		name: 'NUL in a label (MessagePack)',
		encoding: 'msgpack',
		frame: (seq, t) => ({ type: 'frame', seq, t, estimates: [est([1, 2], { label: 'car\0' })] }),
		reason: 'estimates[0].label: contains a NUL character (U+0000) at index 3'
	},
	{
		name: 'NUL in a truth id (JSON)',
		encoding: 'json',
		frame: (seq, t) => ({ type: 'frame', seq, t, truth: [{ id: '\0', x: [1, 2] }] }),
		reason: 'truth[0].id: contains a NUL character (U+0000) at index 0'
	},
	{
		name: 'an unpaired surrogate in a sensor (JSON)',
		encoding: 'json',
		frame: (seq, t) => ({
			type: 'frame',
			seq,
			t,
			measurements: [{ z: [1, 2], sensor: 'r\ud800' }]
		}),
		reason: 'measurements[0].sensor: contains an unpaired surrogate (U+D800) at index 1'
	}
];

describe('frames the database would refuse', () => {
	it('are quarantined with their reason between good frames, and the run goes on', async () => {
		const r = await connect();
		r.send({ type: 'open', client_run_id: 'poison-1', run }, 'json');
		const opened = await r.next('opened', (m) => m.type === 'opened');
		const runId = opened.run_id as string;

		let seq = 0;
		const good: number[] = [];
		const bad = new Map<number, (typeof poison)[number]>();
		const sendGood = (encoding: 'json' | 'msgpack', huge = false) => {
			// huge: finite numbers near the largest double; their metrics overflow, and must still be stored
			const x = huge ? [1.7e308, -1.7e308] : [10 + seq * 0.1, 2];
			r.send(
				{
					type: 'frame',
					seq,
					t: t0 + seq * 0.05,
					estimates: [est(x, { id: `e${seq}`, label: 'Fußgänger' })],
					truth: [{ id: 't1', x: [10 + seq * 0.1, 2.1] }]
				},
				encoding
			);
			good.push(seq++);
		};
		sendGood('msgpack');
		for (const p of poison) {
			bad.set(seq, p);
			r.send(p.frame(seq, t0 + seq * 0.05), p.encoding);
			seq++;
			sendGood(seq % 2 === 0 ? 'json' : 'msgpack', seq % 3 === 0);
			// each poison frame is answered with invalid_frame, and the good frame after it is acknowledged
			await r.next(
				`ack of ${seq - 1} after "${p.name}"`,
				(m) => m.type === 'ack' && m.seq === seq - 1
			);
		}
		for (const [s, p] of bad) {
			const err = await r.next(`error for "${p.name}"`, (m) => m.type === 'error' && m.seq === s);
			expect(err.code, p.name).toBe('invalid_frame');
			if (typeof p.reason === 'string') expect(err.message, p.name).toBe(p.reason);
			else expect(err.message, p.name).toMatch(p.reason);
		}
		r.send({ type: 'close' }, 'json');
		const closed = await r.next('closed', (m) => m.type === 'closed');
		expect(closed).toEqual({ type: 'closed', run_id: runId, frames: good.length });
		await new Promise((res) => (r.closed ? res(null) : r.ws.once('close', res)));
		expect(r.closed?.code).toBe(1000);

		const sql = sqlClient();
		const frames = await sql<{ seq: number }[]>`
			select seq::int from frames where run_id = ${runId} order by seq`;
		expect(frames.map((f) => f.seq)).toEqual(good);
		const q = await sql<{ seq: number; reason: string; raw: Buffer }[]>`
			select seq::int, reason, raw from quarantine where run_id = ${runId} order by seq`;
		expect(q.map((e) => e.seq)).toEqual([...bad.keys()]);
		for (const e of q) {
			const p = bad.get(e.seq)!;
			if (typeof p.reason === 'string') expect(e.reason, p.name).toBe(p.reason);
			else expect(e.reason, p.name).toMatch(p.reason);
			// kept raw, exactly as sent
			const sent = p.frame(e.seq, t0 + e.seq * 0.05);
			if (p.encoding === 'json') expect(e.raw.toString(), p.name).toBe(JSON.stringify(sent));
			else expect(e.raw.equals(packr.pack(sent)), p.name).toBe(true);
		}
		const [counts] = await sql<
			{ frame_count: number; quarantine_count: number; next_seq: number }[]
		>`
			select frame_count::int, quarantine_count::int, next_seq::int from runs where id = ${runId}`;
		expect(counts).toEqual({
			frame_count: good.length,
			quarantine_count: bad.size,
			next_seq: seq
		});
	});
});

describe('opens the database would refuse', () => {
	it('get invalid_open with the field named, store nothing, and the connection can still open a run', async () => {
		const r = await connect();
		const cases: [Record<string, unknown>, 'json' | 'msgpack', string][] = [
			[{ run: { ...run, name: 'n\0' } }, 'msgpack', 'run.name: contains a NUL character'],
			[{ run: { ...run, notes: '\0' } }, 'json', 'run.notes: contains a NUL character'],
			[{ run: { ...run, tags: ['ok', '\0'] } }, 'json', 'run.tags[1]: contains a NUL character'],
			[
				{ run: { ...run, state_fields: ['x', 'y', 'v\0'] } },
				'msgpack',
				'run.state_fields[2]: contains a NUL character'
			],
			[
				{ client_run_id: 'c\0', run },
				'json',
				'client_run_id: contains a NUL character (U+0000) at index 1'
			],
			[{ run: { ...run, name: '\udc00' } }, 'json', 'run.name: contains an unpaired surrogate'],
			[{ run: { ...run, 'na\0me': 'x' } }, 'json', 'run.na\\u0000me: unknown field']
		];
		for (const [i, [msg, encoding, reason]] of cases.entries()) {
			r.inbox = [];
			r.send({ type: 'open', ...msg }, encoding);
			const err = await r.next(`invalid_open ${i}`, (m) => m.type === 'error');
			expect(err.code, reason).toBe('invalid_open');
			expect(err.message, reason).toContain(reason);
		}
		r.send({ type: 'open', client_run_id: 'after-bad-opens', run }, 'msgpack');
		const opened = await r.next('opened', (m) => m.type === 'opened');
		expect(r.closed).toBeNull();
		const runs = await sqlClient()<{ id: string }[]>`
			select id from runs r where rig_id = (select rig_id from runs where id = ${opened.run_id as string})`;
		expect(runs.map((x) => x.id)).toEqual([opened.run_id]);
	});
});

describe('a frame refused by the database that validation did not foresee', () => {
	it('over the socket: quarantined with the database reason, answered invalid_frame, and the run goes on', async () => {
		const r = await connect();
		r.send({ type: 'open', client_run_id: 'unforeseen', run }, 'msgpack');
		const runId = (await r.next('opened', (m) => m.type === 'opened')).run_id as string;
		expect(runId).toMatch(/^[0-9a-f-]{36}$/);
		// A rule of the database no validation knows: this run's frames may not hold exactly 3 truth objects.
		const sql = sqlClient();
		await sql.unsafe(
			`alter table frames add constraint poison_test_three_truths check (run_id <> '${runId}' or n_truth is distinct from 3)`
		);
		try {
			const truth = (n: number) => Array.from({ length: n }, (_, k) => ({ x: [k, 1] }));
			for (const [seq, n] of [
				[0, 1],
				[1, 3],
				[2, 2]
			])
				r.send({ type: 'frame', seq, t: t0 + seq * 0.05, truth: truth(n) }, 'msgpack');
			const err = await r.next('invalid_frame for seq 1', (m) => m.type === 'error');
			expect(err).toMatchObject({ code: 'invalid_frame', seq: 1 });
			expect(err.message).toMatch(
				/^the database refused this frame: .*violates check constraint "poison_test_three_truths"/
			);
			await r.next('ack of 2', (m) => m.type === 'ack' && m.seq === 2);
			r.send({ type: 'frame', seq: 3, t: t0 + 0.2, truth: truth(1) }, 'json');
			await r.next('ack of 3', (m) => m.type === 'ack' && m.seq === 3);
			r.send({ type: 'close' }, 'json');
			expect(await r.next('closed', (m) => m.type === 'closed')).toMatchObject({ frames: 3 });
		} finally {
			await sql.unsafe('alter table frames drop constraint if exists poison_test_three_truths');
		}
		expect(r.closed?.code ?? 1000).toBe(1000);
		const frames = await sql<{ seq: number }[]>`
			select seq::int from frames where run_id = ${runId} order by seq`;
		expect(frames.map((f) => f.seq)).toEqual([0, 2, 3]);
		const q = await sql<{ seq: number; reason: string }[]>`
			select seq::int, reason from quarantine where run_id = ${runId}`;
		expect(q).toHaveLength(1);
		expect(q[0].seq).toBe(1);
		expect(q[0].reason).toMatch(/^the database refused this frame: /);
	});

	it('is quarantined with the database reason in the same commit, and the other frames are stored', async () => {
		// the store's safety net, below validation: frames handed to it straight, as the session would
		const rig = await makeRigWithKey('safety-net');
		const store = new PostgresIngestStore(sqlClient(), false);
		const opened = await store.openRun({
			rig: { rigId: rig.rigId, keyId: rig.keyId },
			clientRunId: 'net',
			spec: run
		});
		if (!opened.ok) throw new Error(opened.reason);
		// t = −3e11 s lies in 7537 BC: a JavaScript date, but not one PostgreSQL's timestamps take;
		// t = NaN is no date at all
		const times = [t0, -3e11, t0 + 0.1, NaN, t0 + 0.2];
		const batch = times.map((t, seq) => {
			const frame = { seq, t, truth: [{ x: [1, 2] }] };
			return { seq, t, frame, decoded: frame, raw: toMsgpack({ type: 'frame', ...frame }) };
		});
		const outcome = await store.commitFrames(opened.runId, batch, [
			{ seq: 5, raw: new Uint8Array([1]), encoding: 'json', reason: 'a reason with a NUL \0' }
		]);
		expect(outcome.refused.map((q) => q.seq)).toEqual([1, 3]);
		for (const q of outcome.refused) expect(q.reason).toMatch(/^the database refused this frame: /);

		const sql = sqlClient();
		const frames = await sql<{ seq: number }[]>`
			select seq::int from frames where run_id = ${opened.runId} order by seq`;
		expect(frames.map((f) => f.seq)).toEqual([0, 2, 4]);
		const q = await sql<{ seq: number; reason: string }[]>`
			select seq::int, reason from quarantine where run_id = ${opened.runId} order by seq`;
		expect(q.map((e) => e.seq)).toEqual([1, 3, 5]);
		expect(q[2].reason).toBe('a reason with a NUL \\u0000');
		const [counts] = await sql<
			{ frame_count: number; quarantine_count: number; next_seq: number }[]
		>`
			select frame_count::int, quarantine_count::int, next_seq::int from runs where id = ${opened.runId}`;
		expect(counts).toEqual({ frame_count: 3, quarantine_count: 3, next_seq: 6 });
	});

	it('an open the database refuses for its content is answered invalid_open with its reason', async () => {
		// runs are opened through Drizzle, which wraps the database's error: the reason is still the database's
		const rig = await makeRigWithKey('open-net');
		const store = new PostgresIngestStore(sqlClient(), false);
		const sql = sqlClient();
		await sql.unsafe(
			`alter table runs add constraint poison_test_open check (rig_id <> '${rig.rigId}' or name <> 'refused')`
		);
		try {
			const refused = await store.openRun({
				rig: { rigId: rig.rigId, keyId: rig.keyId },
				clientRunId: 'open-net',
				spec: { ...run, name: 'refused' }
			});
			expect(refused.ok).toBe(false);
			if (refused.ok) return;
			expect(refused.reason).toMatch(
				/^the database refused this open: .*violates check constraint "poison_test_open"$/
			);
			expect(refused.reason).not.toContain('insert into');
		} finally {
			await sql.unsafe('alter table runs drop constraint if exists poison_test_open');
		}
		const runs = await sql`select id from runs where rig_id = ${rig.rigId}`;
		expect(runs).toHaveLength(0);
	});

	it('tells a refusal for content from an unavailable database, on real errors', async () => {
		const sql = sqlClient();
		const caught = async (p: Promise<unknown>) =>
			p.then(
				() => null,
				(e: unknown) => e
			);
		expect(refusedForContent(await caught(sql`select ${'a\0'}::text`))).toBe(true); // 22021
		expect(
			refusedForContent(
				await caught(sql`select '0001-01-01 BC'::timestamptz - interval '5000 years'`)
			)
		).toBe(true); // 22008
		const rig = await makeRigWithKey('dup');
		// 23505, a duplicate key: a resend resolves it, so it is not the frame's fault
		expect(
			refusedForContent(
				await caught(sql`insert into rigs (id, name) values (${rig.rigId}, 'again')`)
			)
		).toBe(false);
		const nowhere = postgres('postgres://skein@127.0.0.1:1/none', { max: 1, connect_timeout: 2 });
		const refusedConnection = await caught(nowhere`select 1`);
		await nowhere.end();
		expect(refusedConnection).toBeInstanceOf(Error);
		expect(refusedForContent(refusedConnection)).toBe(false);
	});
});
