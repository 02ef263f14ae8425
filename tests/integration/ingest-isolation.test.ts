/**
 * One rig's expensive frames must not hold up another rig's acknowledgements (issue 11, finding 4): a rig
 * sending frames whose GOSPA is as costly as the limits allow streams beside an ordinary rig, and the
 * ordinary rig's frames are acknowledged one after another while the heavy ones are still in work. Only the
 * order of the acks is asserted, never a duration.
 */
import { Packr } from 'msgpackr';
import { beforeAll, describe, expect, inject, it } from 'vitest';
import WebSocket from 'ws';
import { DEFAULT_LIMITS } from '$lib/protocol/limits';
import { seededRandom } from '$lib/random';
import { makeRigWithKey } from '../support/rigs';

let wsUrl: string;
const packr = new Packr({ useRecords: false });
const run = {
	name: 'isolation',
	state_fields: ['x', 'y', 'vx', 'vy'],
	measurement_fields: ['x', 'y']
};

beforeAll(() => {
	wsUrl = inject('appUrl').replace('http', 'ws') + '/ingest/v1';
});

/** A raw MessagePack rig that records what it receives, in order, into a log shared with other rigs. */
async function rig(name: string, log: string[]) {
	const { secret } = await makeRigWithKey(name);
	const ws = new WebSocket(wsUrl, { headers: { authorization: `Bearer ${secret}` } });
	const waiters: { pred: (m: Record<string, unknown>) => boolean; done: () => void }[] = [];
	ws.on('message', (d) => {
		const m = packr.unpack(d as Buffer) as Record<string, unknown>;
		if (m.type === 'ack') log.push(`${name} ack ${m.seq}`);
		if (m.type === 'error') log.push(`${name} error ${m.code} ${m.message}`);
		for (const w of [...waiters]) {
			if (w.pred(m)) {
				waiters.splice(waiters.indexOf(w), 1);
				w.done();
			}
		}
	});
	await new Promise((r, j) => (ws.once('open', r), ws.once('error', j)));
	const until = (pred: (m: Record<string, unknown>) => boolean) =>
		new Promise<void>((done) => waiters.push({ pred, done }));
	const opened = until((m) => m.type === 'opened');
	ws.send(packr.pack({ type: 'open', client_run_id: `${name}-1`, run }));
	await opened;
	return {
		send: (f: Record<string, unknown>) => ws.send(packr.pack({ type: 'frame', ...f })),
		acked: (seq: number) =>
			until((m) => m.type === 'ack' && typeof m.seq === 'number' && m.seq >= seq),
		async close() {
			const closed = until((m) => m.type === 'closed');
			ws.send(packr.pack({ type: 'close' }));
			await closed;
		}
	};
}

describe('ingest isolates runs from each other', () => {
	it('acknowledges an ordinary rig’s frames while another rig’s heavy frames are in work', async () => {
		const rnd = seededRandom(11);
		// as many truth objects and estimates as the limits allow, all within the cut-off of each other:
		// one 500 × 500 GOSPA group per frame, the most expensive valid frame
		const k = Math.sqrt(DEFAULT_LIMITS.maxPairs);
		expect(k).toBe(500);
		const heavyFrame = (seq: number) => {
			const truth = Array.from({ length: k }, () => ({ x: [rnd() * 5, rnd() * 5, 0, 0] }));
			const estimates = truth.map((o) => ({ x: [o.x[0] + rnd(), o.x[1] + rnd(), 1, 0], r: 0.9 }));
			return { seq, t: 1_790_000_000 + seq, truth, estimates };
		};
		const ordinaryFrame = (seq: number) => ({
			seq,
			t: 1_790_000_000 + seq * 0.05,
			estimates: [{ x: [10 + seq * 0.1, 2, 2, 0], r: 0.9 }],
			truth: [{ x: [10 + seq * 0.1, 2.1, 2, 0] }]
		});

		const log: string[] = [];
		const heavy = await rig('heavy', log);
		const ordinary = await rig('ordinary', log);
		const HEAVY = 6;
		const ORDINARY = 20;
		for (let seq = 0; seq < HEAVY; seq++) heavy.send(heavyFrame(seq));
		const heavyAcked = heavy.acked(HEAVY - 1);
		// the ordinary rig sends its next frame only once the last one is acknowledged
		for (let seq = 0; seq < ORDINARY; seq++) {
			ordinary.send(ordinaryFrame(seq));
			await ordinary.acked(seq);
		}
		await heavyAcked;
		await Promise.all([heavy.close(), ordinary.close()]);

		expect(log.filter((l) => l.includes('error'))).toEqual([]);
		const firstHeavyAck = log.findIndex((l) => l.startsWith('heavy ack'));
		const ordinaryAcksBefore = log
			.slice(0, firstHeavyAck)
			.filter((l) => l.startsWith('ordinary ack'));
		// every ordinary frame was acknowledged before the first heavy frame was
		expect(ordinaryAcksBefore.at(-1)).toBe(`ordinary ack ${ORDINARY - 1}`);
	});
});
