/** Commits the same batch twice through the PostgreSQL ingest store; prints {runId, sent} as JSON. */
import { toMsgpack } from '../../src/lib/protocol/codec';
import { closeDb } from '../../src/lib/server/db';
import { PostgresIngestStore } from '../../src/lib/server/ingest/store';

const [rigId, keyId] = process.argv.slice(2);
const store = new PostgresIngestStore();
const opened = await store.openRun({
	rig: { rigId, keyId },
	clientRunId: 'twice',
	spec: { name: 'twice', state_fields: ['x', 'y'], measurement_fields: ['x', 'y'] }
});
if (!opened.ok) throw new Error(opened.reason);
const sent = [0, 1, 2].map((seq) => ({
	seq,
	t: 1_790_000_300 + seq * 0.05,
	ego: { x: 0, y: 0, heading: 0 },
	estimates: [{ id: 1, x: [5 + seq, 0], P: [1, 0, 0, 1], r: 0.9 }],
	truth: seq === 1 ? [] : [{ id: 1, x: [5 + seq, 0.2] }]
}));
const batch = sent.map((frame) => ({
	seq: frame.seq,
	t: frame.t,
	frame,
	decoded: frame,
	raw: toMsgpack({ type: 'frame', ...frame })
}));
await store.commitFrames(opened.runId, batch, []);
await store.commitFrames(opened.runId, batch, []);
await closeDb();
console.log(JSON.stringify({ runId: opened.runId, sent }));
