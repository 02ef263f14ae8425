/** The series endpoint groups the metric columns in SQL exactly as the reference downsampling does. */
import { beforeAll, describe, expect, inject, it } from 'vitest';
import { sqlClient } from '$server/db';
import { downsample } from '$lib/viewer/series';
import { Browserish } from '../support/client';
import { makePerson } from '../support/factories';
import { makeRigWithKey } from '../support/rigs';

let reader: Browserish;
let runId: string;
const t0 = 1_790_200_000;
const N = 2000;
const gospaAt = (k: number) => (k % 97 === 0 ? null : 2 + Math.sin(k / 50) + (k === 1234 ? 9 : 0));

interface Series {
	t: number[];
	frames: number[];
	width: number;
	columns: Record<
		string,
		{ min: (number | null)[]; max: (number | null)[]; mean: (number | null)[] }
	>;
	zones: Record<string, { mean: (number | null)[] }>;
}

beforeAll(async () => {
	const p = await makePerson('viewer', 'series-reader');
	reader = new Browserish(inject('appUrl'));
	await reader.signIn(p.email, p.password);
	const rig = await makeRigWithKey('series');
	const sql = sqlClient();
	const [run] = await sql<{ id: string }[]>`
		insert into runs (rig_id, name, state_fields, measurement_fields, status, first_t, last_t, frame_count, next_seq)
		values (${rig.rigId}, 'series run', ${['x', 'y']}, ${['x', 'y']}, 'ended', ${t0}, ${t0 + (N - 1) * 0.05}, ${N}, ${N}) returning id`;
	runId = run.id;
	await sql`select skein_ensure_frames_partition(to_timestamp(${t0}))`;
	const rows = Array.from({ length: N }, (_, k) => ({
		run_id: runId,
		seq: k,
		t: t0 + k * 0.05,
		ts: new Date((t0 + k * 0.05) * 1000).toISOString(),
		data: Buffer.from([0x80]),
		n_truth: 3 + (k % 4),
		gospa: gospaAt(k),
		zones: sql.json({ 'ego lane 0–20 m': (k % 10) / 10 })
	}));
	for (let i = 0; i < N; i += 500) await sql`insert into frames ${sql(rows.slice(i, i + 500))}`;
});

const get = async (q: string) => {
	const res = await reader.json(`/api/runs/${runId}/series?${q}`, 'GET');
	return {
		status: res.status,
		body: (await res.json()) as { series: Series; error?: { details: Record<string, string> } }
	};
};

describe('series endpoint', () => {
	it('gives min, max and mean per bucket as the reference downsampling does', async () => {
		const { status, body } = await get('buckets=50');
		expect(status).toBe(200);
		const s = body.series;
		const times = Array.from({ length: N }, (_, k) => k * 0.05);
		const ref = downsample(
			times,
			times.map((_, k) => gospaAt(k)),
			0,
			(N - 1) * 0.05,
			50
		);
		expect(s.t.length).toBe(50);
		expect(s.frames.reduce((a, b) => a + b, 0)).toBe(N);
		expect(s.frames).toEqual(ref.frames);
		s.columns.gospa.max.forEach((v, i) => expect(v).toBeCloseTo(ref.max[i]!, 9));
		s.columns.gospa.mean.forEach((v, i) => expect(v).toBeCloseTo(ref.mean[i]!, 9));
		expect(Math.max(...(s.columns.gospa.max as number[]))).toBeCloseTo(gospaAt(1234)!, 9);
		expect(s.columns.n_truth.min.every((v) => v === 3)).toBe(true);
		expect(s.columns.n_truth.max.every((v) => v === 6)).toBe(true);
		expect(s.zones['ego lane 0–20 m'].mean[0]).toBeCloseTo(0.45, 9);
	});

	it('refines a zoomed window', async () => {
		const { body } = await get('from=10&to=20&buckets=100');
		expect(body.series.width).toBeCloseTo(0.1, 9);
		expect(body.series.t[0]).toBeCloseTo(10, 9);
		expect(body.series.frames.reduce((a, b) => a + b, 0)).toBe(201);
	});

	it('refuses bad parameters and unknown runs', async () => {
		for (const q of ['buckets=0', 'buckets=99999', 'from=5&to=2', 'from=abc'])
			expect((await get(q)).status, q).toBe(422);
		expect(
			(await reader.json('/api/runs/00000000-0000-4000-8000-000000000000/series', 'GET')).status
		).toBe(404);
	});
});
