/**
 * Durability of ingest: resumes after dropped sockets, a kill -9 of the app mid-stream, and a second rig
 * that loses nothing while a first one sends garbage.
 */
import { unpack } from '$lib/msgpack';
import { seededRandom as prng } from '$lib/random';
import { describe, expect, inject, it } from 'vitest';
import WebSocket from 'ws';
import { SkeinRigClient } from '$lib/protocol/client';
import type { Frame } from '$lib/protocol/types';
import { sqlClient } from '$server/db';
import { startApp } from '../support/app';
import { CuttableLink } from '../support/proxy';
import { makeRigWithKey } from '../support/rigs';

const run = { name: 'durability', state_fields: ['x', 'y'], measurement_fields: ['x', 'y'] };

function frame(i: number, t0: number): Omit<Frame, 'seq'> {
	return {
		t: t0 + i * 0.05,
		estimates: [{ id: 1, x: [i, 0.5 * i], P: [1, 0, 0, 1], r: 0.8 }],
		...(i % 3 === 0 ? { truth: [] } : { truth: [{ id: 1, x: [i, 0.5 * i] }] }),
		...(i % 4 === 0 ? {} : { measurements: [{ z: [i + 0.1, 0.5 * i] }] })
	};
}

async function storedSeqs(runId: string): Promise<{ seq: number; n: number }[]> {
	return sqlClient()<{ seq: number; n: number }[]>`
		select seq::int, count(*)::int as n from frames where run_id = ${runId} group by seq order by seq`;
}

describe('ingest durability', () => {
	it('resumes after the socket is dropped at 20 random points: every frame stored once, in order, sets intact', async () => {
		const base = inject('appUrl');
		const rig = await makeRigWithKey('drops');
		const random = prng(42);
		const link = new CuttableLink(Number(new URL(base).port));
		await link.listen();
		const client = new SkeinRigClient({
			url: `ws://127.0.0.1:${link.port}/ingest/v1`,
			key: rig.secret,
			clientRunId: 'drops',
			run,
			backoff: { minMs: 10, maxMs: 50 },
			random
		});
		const { runId } = await client.start();
		const t0 = 1_790_100_000;
		const total = 2000;
		const dropAt = new Set<number>();
		while (dropAt.size < 20) dropAt.add(1 + Math.floor(random() * (total - 2)));
		for (let i = 0; i < total; i++) {
			client.send(frame(i, t0));
			if (dropAt.has(i)) {
				// let some frames and acks cross, then reset the connection under both ends
				await new Promise((r) => setTimeout(r, 2 + random() * 20));
				while (!client.stats.connected) await new Promise((r) => setTimeout(r, 5));
				link.cutAll();
			}
			if (i % 20 === 0) await new Promise((r) => setTimeout(r, 1));
		}
		const closed = await client.close();
		await link.close();
		expect(closed.frames).toBe(total);
		expect(link.cuts).toBeGreaterThanOrEqual(20);
		expect(client.stats.reconnects).toBeGreaterThanOrEqual(20);
		const seqs = await storedSeqs(runId);
		expect(seqs.length).toBe(total);
		expect(seqs.every((s, i) => s.seq === i && s.n === 1)).toBe(true);
		const res = await fetch(`${base}/api/runs/${runId}/frames?limit=5000`, {
			headers: { authorization: `Bearer ${await apiToken()}` }
		});
		const { frames } = (await res.json()) as { frames: Frame[] };
		frames.forEach((f, i) => expect(f).toEqual({ seq: i, ...frame(i, t0) }));
	});

	it('after kill -9 of the app mid-stream and a restart, every acknowledged frame is there, none twice', async () => {
		const app = await startApp();
		const rig = await makeRigWithKey('crash');
		const url = app.url.replace('http', 'ws') + '/ingest/v1';
		const t0 = 1_790_200_000;
		const first = new SkeinRigClient({
			url,
			key: rig.secret,
			clientRunId: 'crash',
			run,
			backoff: { minMs: 20, maxMs: 100 }
		});
		const { runId } = await first.start();
		let acked = -1;
		first.on((e) => {
			if (e.type === 'ack') acked = e.seq;
		});
		const total = 3000;
		let sentBeforeKill = 0;
		let stop = false;
		const sender = (async () => {
			for (let i = 0; i < total && !stop; i++) {
				first.send(frame(i, t0));
				sentBeforeKill = i;
				if (i % 10 === 0) await new Promise((r) => setTimeout(r, 2));
			}
		})();
		const deadline = Date.now() + 30_000;
		while (acked < 800 && Date.now() < deadline) await new Promise((r) => setTimeout(r, 2));
		expect(acked).toBeGreaterThanOrEqual(800);
		await app.stop('SIGKILL');
		stop = true;
		await sender;
		const ackedAtKill = acked;
		first.abort();

		const seqs = await storedSeqs(runId);
		expect(seqs.length).toBeGreaterThanOrEqual(ackedAtKill + 1);
		expect(seqs.every((s, i) => s.seq === i && s.n === 1)).toBe(true);

		const again = await startApp();
		try {
			const second = new SkeinRigClient({
				url: again.url.replace('http', 'ws') + '/ingest/v1',
				key: rig.secret,
				clientRunId: 'crash',
				run
			});
			const opened = await second.start();
			expect(opened.runId).toBe(runId);
			expect(opened.nextSeq).toBe(seqs.length);
			// the rig resends from next_seq: frames the server already had are not sent twice
			for (let i = opened.nextSeq; i < total; i++) second.send(frame(i, t0));
			const closed = await second.close();
			expect(closed.frames).toBe(total);
			const after = await storedSeqs(runId);
			expect(after.length).toBe(total);
			expect(after.every((s, i) => s.seq === i && s.n === 1)).toBe(true);
			expect(sentBeforeKill).toBeGreaterThan(ackedAtKill);
		} finally {
			await again.stop();
		}
	});

	it('a rig sending garbage gets its errors while a second rig streaming at the same time loses nothing', async () => {
		const base = inject('appUrl');
		const url = base.replace('http', 'ws') + '/ingest/v1';
		const good = await makeRigWithKey('good');
		const bad = await makeRigWithKey('bad');
		const client = new SkeinRigClient({ url, key: good.secret, clientRunId: 'steady', run });
		const { runId } = await client.start();
		const t0 = 1_790_300_000;
		const ws = new WebSocket(url, { headers: { authorization: `Bearer ${bad.secret}` } });
		const errors: string[] = [];
		let closeCode = 0;
		ws.on('message', (d, binary) => {
			const m = (binary ? unpack(d as Buffer) : JSON.parse(String(d))) as {
				code?: string;
				type: string;
			};
			errors.push(m.code ?? m.type);
		});
		ws.on('close', (code) => (closeCode = code));
		await new Promise((r) => ws.once('open', r));
		ws.send(JSON.stringify({ type: 'open', client_run_id: 'garbage', run }));
		while (!errors.includes('opened')) await new Promise((r) => setTimeout(r, 10));
		const junk: (string | Buffer)[] = [
			Buffer.from([0xc1, 0xff, 0x00, 0x13]),
			'{not json',
			'[1,2,3]',
			JSON.stringify({ type: 'teleport' }),
			JSON.stringify({ type: 'frame', seq: 0, t: 'soon' }),
			JSON.stringify({ type: 'frame', seq: 1, t: 1, estimates: [{ x: [1, 2], r: 1.5 }] }),
			JSON.stringify({ type: 'frame', seq: 2, t: 2, estimates: [{ x: [1, 2], P: [1, 2, 3, 1] }] }),
			JSON.stringify({ type: 'frame', seq: 3, t: 5, estimates: [{ x: [Number.MAX_VALUE, 2] }] }),
			JSON.stringify({ type: 'frame', seq: 4, t: 0.5 }),
			JSON.stringify({
				type: 'frame',
				seq: 5,
				t: 6,
				truth: Array.from({ length: 6000 }, () => ({ x: [0, 0] }))
			}),
			JSON.stringify({
				type: 'frame',
				seq: 6,
				t: 7,
				ego: { x: [[[[[[[[[[[1]]]]]]]]]]], y: 0, heading: 0 }
			}),
			JSON.stringify({ type: 'frame', seq: 99, t: 8 })
		];
		for (let i = 0; i < 400; i++) {
			client.send(frame(i, t0));
			if (i % 25 === 0 && junk.length) ws.send(junk.shift()!);
		}
		ws.send(Buffer.alloc(2 * 1024 * 1024, 1));
		const closed = await client.close();
		expect(closed.frames).toBe(400);
		const seqs = await storedSeqs(runId);
		expect(seqs.length).toBe(400);
		await new Promise((r) => setTimeout(r, 300));
		expect(errors.filter((e) => e === 'bad_message').length, JSON.stringify(errors)).toBe(4);
		expect(errors.filter((e) => e === 'invalid_frame').length, JSON.stringify(errors)).toBe(6);
		expect(errors).toContain('seq_gap');
		expect(errors).toContain('too_large');
		expect(closeCode).toBe(1009);
		expect((await fetch(`${base}/healthz`)).status).toBe(200);
	});
});

let token: string | undefined;
async function apiToken(): Promise<string> {
	if (token) return token;
	const { makePerson } = await import('../support/factories');
	const { createApiToken } = await import('$server/people');
	const p = await makePerson('viewer', 'durability');
	token = (await createApiToken({ id: p.id, label: p.email }, p.id, 'durability')).token;
	return token;
}
