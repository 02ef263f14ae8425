/**
 * Set metrics in the product, against the real app and PostgreSQL: per-frame rows (stored and computed
 * per request), CSV, the run summary, settings and the background recompute.
 *
 * The run has hand-computable geometry. Definitions used for the expected values:
 * - GOSPA, α = 2 (Rahmathullah, García-Fernández, Svensson, FUSION 2017, eq. 2 with α = 2):
 *   d_p^(c,2)(X, Y)^p = min over assignments γ of Σ_{(i,j)∈γ} d(x_i, y_j)^p + (c^p / 2)(|X| + |Y| − 2|γ|),
 *   where only pairs with d < c are assigned.
 * - OSPA (Schuhmacher, Vo, Vo, IEEE TSP 2008, eq. 3): (1/max(m,n) (Σ min(d, c)^p + c^p |m − n|))^(1/p).
 * - CLEAR MOT (Bernardin & Stiefelhagen 2008): MOTA = 1 − (misses + false positives + mismatches) / Σ g_t,
 *   MOTP = mean distance of matched pairs, with a 2 m gate.
 * - Zone occupancy: 1 − Π(1 − r_i P_i(inside)), a point estimate inside counting P_i = 1.
 * - NEES on the x, y block: e_xyᵀ P_xy⁻¹ e_xy; run bounds χ²_{Nn}(0.025)/N, χ²_{Nn}(0.975)/N
 *   (Bar-Shalom, Li, Kirubarajan 2001, ch. 5).
 */
import { afterAll, beforeAll, describe, expect, inject, it } from 'vitest';
import {
	chiSquareQuantile,
	defaultMetricSettings,
	normalCdf,
	RunSummaryAccumulator,
	type RunSummary
} from '$lib/metrics';
import { SkeinRigClient } from '$lib/protocol/client';
import type { Estimate, Frame, TruthObject } from '$lib/protocol/types';
import { sqlClient } from '$server/db';
import { startMetricJobs, stopMetricJobs } from '$server/metrics/jobs';
import { metricRun } from '$server/metrics/run';
import { computeSummary, summaryFramesRead } from '$server/metrics/summary';
import { Browserish } from '../support/client';
import { makePerson } from '../support/factories';
import { makeRigWithKey } from '../support/rigs';

const runSpec = {
	name: 'metrics yard loop',
	state_fields: ['x', 'y', 'vx', 'vy'],
	measurement_fields: ['x', 'y']
};
const t0 = 1_790_100_000;
const dt = 0.1;
const ego = { x: 0, y: 0, heading: 0 };
const diag = (a: number, b: number) => [a, 0, 0, 0, 0, b, 0, 0, 0, 0, 1, 0, 0, 0, 0, 1];

// Truth T1 at (0, −5) and T2 at (40, 0); estimates "a" 5 m from T1, "b" 1 m from T2, and a "ghost"
// at (10, 0), more than c = 10 m from both (11.18 m and 30 m), inside the ego lane zone.
const T: TruthObject[] = [
	{ id: 'T1', x: [0, -5, 0, 0] },
	{ id: 'T2', x: [40, 0, 0, 0] }
];
const a: Estimate = { id: 'a', x: [3, -1, 0, 0], r: 0.9 };
const b: Estimate = { id: 'b', x: [40, 1, 0, 0], r: 1, P: diag(1, 1) };
const ghost: Estimate = { id: 'ghost', x: [10, 0, 0, 0], r: 0.6 };
const measurements = [{ z: [3.1, -1.2] }, { z: [39.8, 0.9] }];

/**
 * f0, f3: T1–a (d = 5), T2–b (d = 1), ghost false.
 *   GOSPA² = 25 + 1 + (100/2)·1 = 76; OSPA² = (25 + 1 + 100·1)/3 = 42; E[N] = 0.9 + 1 + 0.6 = 2.5.
 *   Zone "ego lane 0–20 m": a (3, −1) and ghost (10, 0) inside as points, b 39 m ahead (Gaussian mass
 *   ~0) → 1 − (1 − 0.9)(1 − 0.6) = 0.96. NEES(b) = 1²/1 = 1.
 * f1: truth not reported → no GOSPA. f2: both sets reported empty → GOSPA 0.
 * f4: a moved onto T1 (d = 0.5), b replaced by "c" 0.5 m from T2 (an ID switch), ghost stays.
 *   GOSPA² = 0.25 + 0.25 + 50 = 50.5. NEES(c) = 0.5²/0.25 = 1. Zone: only ghost → 0.6.
 */
const frames: Omit<Frame, 'seq'>[] = [
	{ t: t0, ego, measurements, truth: T, estimates: [a, b, ghost] },
	{ t: t0 + dt, ego, measurements, estimates: [a, b, ghost] },
	{ t: t0 + 2 * dt, ego, measurements: [], truth: [], estimates: [] },
	{ t: t0 + 3 * dt, ego, measurements, truth: T, estimates: [a, b, ghost] },
	{
		t: t0 + 4 * dt,
		ego,
		measurements,
		truth: T,
		estimates: [
			{ ...a, x: [0.5, -5, 0, 0] },
			{ id: 'c', x: [40, 0.5, 0, 0], r: 1, P: diag(0.25, 0.25) },
			ghost
		]
	}
];

interface Row {
	seq: number;
	t: number;
	n_truth: number | null;
	n_estimates: number | null;
	gospa: number | null;
	gospa_localization: number | null;
	gospa_missed: number | null;
	gospa_false: number | null;
	ospa: number | null;
	expected_cardinality: number | null;
	nees_mean: number | null;
	nees_count: number | null;
	zones: Record<string, number>;
}
interface RowsBody {
	unit: string;
	source: string;
	settings: { c: number; p: number };
	rows: Row[];
	next_from_seq: number | null;
}

let base: string;
let viewer: Browserish;
let engineer: Browserish;
let runId: string;
const lane = 'ego lane 0–20 m';

beforeAll(async () => {
	base = inject('appUrl');
	await startMetricJobs(process.env.DATABASE_URL);
	const [v, e] = await Promise.all([
		makePerson('viewer', 'metrics-viewer'),
		makePerson('engineer', 'metrics-engineer')
	]);
	viewer = new Browserish(base);
	engineer = new Browserish(base);
	await viewer.signIn(v.email, v.password);
	await engineer.signIn(e.email, e.password);

	const rig = await makeRigWithKey('metrics');
	const client = new SkeinRigClient({
		url: base.replace('http', 'ws') + '/ingest/v1',
		key: rig.secret,
		clientRunId: 'm1',
		run: runSpec
	});
	({ runId } = await client.start());
	for (const f of frames) client.send(f);
	expect(await client.close()).toEqual({ run_id: runId, frames: frames.length });
});

afterAll(async () => {
	await stopMetricJobs();
});

async function rows(query = ''): Promise<RowsBody> {
	const res = await viewer.json(`/api/runs/${runId}/metrics${query}`, 'GET');
	expect(res.status, query).toBe(200);
	return (await res.json()) as RowsBody;
}

describe('GET /api/runs/{id}/metrics', () => {
	it('returns the stored per-frame rows with their unit and settings', async () => {
		const body = await rows();
		expect(body.unit).toBe('m');
		expect(body.source).toBe('stored');
		expect(body.settings).toMatchObject({ c: 10, p: 2 });
		expect(body.next_from_seq).toBeNull();
		const r = body.rows;
		expect(r.map((x) => x.seq)).toEqual([0, 1, 2, 3, 4]);
		expect(r[0]).toMatchObject({
			t: t0,
			n_truth: 2,
			n_estimates: 3,
			gospa_missed: 0,
			gospa_false: 1,
			nees_mean: 1,
			nees_count: 1
		});
		expect(r[0].gospa).toBeCloseTo(Math.sqrt(76), 12);
		expect(r[0].gospa_localization).toBeCloseTo(26, 12);
		expect(r[0].ospa).toBeCloseTo(Math.sqrt(42), 12);
		expect(r[0].expected_cardinality).toBeCloseTo(2.5, 12);
		expect(r[0].zones[lane]).toBeCloseTo(0.96, 12);
		expect(r[1]).toMatchObject({ n_truth: null, gospa: null, ospa: null, n_estimates: 3 });
		expect(r[2]).toMatchObject({
			n_truth: 0,
			n_estimates: 0,
			gospa: 0,
			ospa: 0,
			expected_cardinality: 0
		});
		expect(r[4].gospa).toBeCloseTo(Math.sqrt(50.5), 12);
		expect(r[4].zones[lane]).toBeCloseTo(0.6, 12);
	});

	it('pages with from_seq, to_seq and limit', async () => {
		const first = await rows('?limit=2');
		expect(first.rows.map((x) => x.seq)).toEqual([0, 1]);
		expect(first.next_from_seq).toBe(2);
		const rest = await rows(`?from_seq=${first.next_from_seq}&to_seq=3`);
		expect(rest.rows.map((x) => x.seq)).toEqual([2, 3]);
		expect(rest.next_from_seq).toBeNull();
	});

	it('writes CSV: header with zone columns, full-precision numbers, empty cells where truth is absent', async () => {
		const res = await viewer.request(`/api/runs/${runId}/metrics`, {
			headers: { accept: 'text/csv' }
		});
		expect(res.status).toBe(200);
		expect(res.headers.get('content-type')).toMatch(/^text\/csv/);
		const lines = (await res.text()).split('\r\n');
		expect(lines[0]).toBe(
			`seq,t,n_truth,n_estimates,n_measurements,expected_cardinality,gospa,gospa_localization,gospa_missed,gospa_false,ospa,nees_mean,nees_count,zone:${lane}`
		);
		expect(lines).toHaveLength(frames.length + 2); // header, rows, and the empty string after the last CRLF
		const f0 = lines[1].split(',');
		expect(f0[0]).toBe('0');
		expect(f0[1]).toBe(String(t0));
		expect(Number(f0[6])).toBe((await rows('?to_seq=0')).rows[0].gospa); // no rounding on the way
		// f1 has no truth: n_truth, GOSPA and its parts, OSPA and NEES are empty cells
		expect(lines[2]).toMatch(/^1,1790100000\.1,,3,2,2\.5,,,,,,,0,0\.96\d*$/);
		const dl = await viewer.request(`/api/runs/${runId}/metrics?format=csv&to_seq=0`);
		expect(dl.headers.get('content-disposition')).toMatch(/attachment; filename=".*\.csv"/);
		expect((await dl.text()).split('\r\n')).toHaveLength(3);
	});

	it('computes rows for one request with other c and p, leaving the stored ones alone', async () => {
		// c = 3, p = 2, f0: T1–a at 5 m ≥ c is no longer assigned → missed 1, false 2 (a, ghost), T2–b kept:
		// GOSPA² = 1 + (9/2)(1 + 2) = 14.5.
		const c3 = await rows('?c=3&to_seq=0');
		expect(c3.source).toBe('computed');
		expect(c3.settings).toMatchObject({ c: 3, p: 2 });
		expect(c3.rows[0]).toMatchObject({ gospa_missed: 1, gospa_false: 2 });
		expect(c3.rows[0].gospa).toBeCloseTo(Math.sqrt(14.5), 12);
		expect(c3.rows[0].gospa_localization).toBeCloseTo(1, 12);
		// p = 1, c = 10, f0: GOSPA = 5 + 1 + (10/2)·1 = 11.
		const p1 = await rows('?p=1&to_seq=0');
		expect(p1.rows[0].gospa).toBeCloseTo(11, 12);
		// f4 with c = 3: both pairs (0.5 m) stay, ghost false → GOSPA² = 0.5 + 4.5 = 5.
		const f4 = await rows('?c=3&from_seq=4');
		expect(f4.rows[0].gospa).toBeCloseTo(Math.sqrt(5), 12);
		const csv = await viewer.request(`/api/runs/${runId}/metrics?c=3&p=1&to_seq=0`, {
			headers: { accept: 'text/csv' }
		});
		// p = 1, c = 3: 1 + (3/2)(1 + 2) = 5.5
		expect((await csv.text()).split('\r\n')[1].split(',')[6]).toBe('5.5');
		expect((await rows('?to_seq=0')).rows[0].gospa).toBeCloseTo(Math.sqrt(76), 12);
	});

	it('refuses bad query parameters with 422 naming them, and unknown runs with 404', async () => {
		for (const [q, key] of [
			['c=0', 'c'],
			['c=-2', 'c'],
			['c=abc', 'c'],
			['p=0.5', 'p'],
			['p=nope', 'p'],
			['limit=0', 'limit'],
			['from_seq=4&to_seq=1', 'to_seq'],
			['format=xml', 'format']
		]) {
			const res = await viewer.json(`/api/runs/${runId}/metrics?${q}`, 'GET');
			expect(res.status, q).toBe(422);
			const body = (await res.json()) as {
				error: { code: string; details: Record<string, string> };
			};
			expect(body.error.code).toBe('invalid');
			expect(Object.keys(body.error.details), q).toContain(key);
		}
		const nobody = '00000000-0000-4000-8000-000000000000';
		for (const path of ['metrics', 'summary', 'settings']) {
			const res = await viewer.json(`/api/runs/${nobody}/${path}`, 'GET');
			expect(res.status, path).toBe(404);
			expect(((await res.json()) as { error: { code: string } }).error.code).toBe('not_found');
		}
	});
});

describe('GET /api/runs/{id}/summary', () => {
	it('gives the run figures with units, computed once and then served from the cache', async () => {
		const res = await viewer.json(`/api/runs/${runId}/summary`, 'GET');
		expect(res.status).toBe(200);
		const body = (await res.json()) as {
			units: Record<string, string>;
			recomputed: boolean;
			summary: RunSummary;
		};
		expect(body.recomputed).toBe(true);
		expect(body.units).toMatchObject({
			length: 'm',
			gospa: 'm',
			gospa_localization: 'm^2',
			confirmation_latency: 's'
		});
		const s = body.summary;
		if (!s.gospa || !s.cardinality || !s.nees || !s.tracks?.confirmationLatency)
			throw new Error('summary figures missing');
		expect(s.frames).toBe(5);
		expect(s.framesWithTruth).toBe(4);
		// GOSPA over f0, f2, f3, f4: √76, 0, √76, √50.5
		expect(s.gospa.mean).toBeCloseTo((2 * Math.sqrt(76) + Math.sqrt(50.5)) / 4, 12);
		expect(s.gospa.rms).toBeCloseTo(Math.sqrt((76 + 76 + 50.5) / 4), 12);
		expect(s.gospa.max).toBeCloseTo(Math.sqrt(76), 12);
		expect(s.gospa.missedTotal).toBe(0);
		expect(s.gospa.falseTotal).toBe(3);
		expect(s.gospa.localizationMean).toBeCloseTo((26 + 0 + 26 + 0.5) / 4, 12);
		// cardinality: |X| = 2, 0, 2, 2; E[N] = 2.5, 0, 2.5, 2.5 → error 0.5, 0, 0.5, 0.5
		expect(s.cardinality.truthMean).toBeCloseTo(1.5, 12);
		expect(s.cardinality.errorMean).toBeCloseTo(0.375, 12);
		expect(s.cardinality.errorRms).toBeCloseTo(Math.sqrt(0.75 / 4), 12);
		// NEES: three samples of 1 (b in f0 and f3, c in f4), dimension 2 → bounds χ²_6(0.025)/3, χ²_6(0.975)/3
		expect(s.nees).toMatchObject({ samples: 3, dim: 2, verdict: 'consistent' });
		expect(s.nees.mean).toBeCloseTo(1, 12);
		expect(s.nees.lower).toBeCloseTo(chiSquareQuantile(0.025, 6) / 3, 9);
		expect(s.nees.upper).toBeCloseTo(chiSquareQuantile(0.975, 6) / 3, 9);
		expect(s.nees.lower).toBeCloseTo(1.2373442 / 3, 6); // tabulated χ²_6 quantiles
		expect(s.nees.upper).toBeCloseTo(14.4493753 / 3, 6);
		// f0, f1, f3: 0.96; f2 reports no estimates: 0; f4: 0.6
		expect(s.zones[lane].mean).toBeCloseTo((0.96 * 3 + 0 + 0.6) / 5, 12);
		// CLEAR MOT with a 2 m gate. Fed frames f0, f2, f3, f4 (f1 has no truth).
		// f0, f3: T2–b matched (1 m), T1 missed (a is 5 m away), a and ghost false. f2: empty.
		// f4: T1–a (0.5 m) and T2–c (0.5 m); T2 was b before → one mismatch; ghost false.
		// Σg = 6, matches 4, misses 2, false positives 5, mismatches 1 → MOTA = 1 − 8/6; MOTP = (1 + 1 + 0.5 + 0.5)/4.
		const k = s.tracks;
		const latency = s.tracks.confirmationLatency;
		expect(k).toMatchObject({
			frames: 4,
			truthCount: 6,
			matches: 4,
			misses: 2,
			falsePositives: 5,
			idSwitches: 1,
			fragmentations: 0
		});
		expect(k.mota).toBeCloseTo(1 - 8 / 6, 12);
		expect(k.motp).toBeCloseTo(0.75, 12);
		// T1 first matched at f4 (0.4 s after it appeared), T2 at once; ghost never matched, lived f0..f4
		expect(k.latencyByTruth.T1).toBeCloseTo(0.4, 5);
		expect(k.latencyByTruth.T2).toBe(0);
		expect(latency.mean).toBeCloseTo(0.2, 5);
		expect(k.falseTracks.count).toBe(1);
		expect(k.falseTracks.meanLifetime).toBeCloseTo(0.4, 5);

		const again = (await (await viewer.json(`/api/runs/${runId}/summary`, 'GET')).json()) as {
			recomputed: boolean;
		};
		expect(again.recomputed).toBe(false);
		const [cache] = await sqlClient()<
			{ summary: { frames: number; settings: { c: number } } }[]
		>`select summary from runs where id = ${runId}`;
		expect(cache.summary).toMatchObject({ frames: 5, settings: { c: 10 } });
	});
});

describe('the summary of a run that grows', () => {
	it('equals the summary of all its frames computed at once, each time it is asked for', async () => {
		const rig = await makeRigWithKey('metrics-growing');
		const client = new SkeinRigClient({
			url: base.replace('http', 'ws') + '/ingest/v1',
			key: rig.secret,
			clientRunId: 'growing',
			run: runSpec
		});
		const { runId: growing } = await client.start();
		// the whole run once, in this process, with the same code (RunSummaryAccumulator)
		const expectedAfter = (n: number) => {
			const acc = new RunSummaryAccumulator({
				stateFields: runSpec.state_fields,
				settings: defaultMetricSettings,
				coords: 'world'
			});
			frames.slice(0, n).forEach((f, seq) => acc.add({ ...f, seq }));
			return acc.result();
		};
		const summary = async () =>
			(await (await viewer.json(`/api/runs/${growing}/summary`, 'GET')).json()) as {
				recomputed: boolean;
				summary: RunSummary;
			};
		try {
			for (const f of frames.slice(0, 3)) client.send(f);
			await client.flush();
			const first = await summary();
			expect(first.recomputed).toBe(true);
			expect(first.summary).toEqual(expectedAfter(3));
			// in this process too: the summary after 3 frames reads 3 frames...
			const read0 = summaryFramesRead();
			expect(await computeSummary((await metricRun(growing))!)).toEqual(expectedAfter(3));
			expect(summaryFramesRead() - read0).toBe(3);
			for (const f of frames.slice(3)) client.send(f);
			await client.flush();
			// ...and the next one only the two frames stored since
			const read1 = summaryFramesRead();
			expect(await computeSummary((await metricRun(growing))!)).toEqual(
				expectedAfter(frames.length)
			);
			expect(summaryFramesRead() - read1).toBe(2);
			const second = await summary();
			expect(second.recomputed).toBe(true);
			expect(second.summary).toEqual(expectedAfter(frames.length));
			expect(second.summary.frames).toBe(frames.length);
		} finally {
			await client.close();
		}
	});
});

describe('/api/runs/{id}/settings', () => {
	it('shows the defaults and an idle recompute for a run never configured', async () => {
		const res = await viewer.json(`/api/runs/${runId}/settings`, 'GET');
		expect(res.status).toBe(200);
		const body = (await res.json()) as {
			settings: { c: number; zones: { name: string }[] };
			recompute: { state: string };
		};
		expect(body.settings.c).toBe(10);
		expect(body.settings.zones.map((z) => z.name)).toEqual([lane]);
		expect(body.recompute).toMatchObject({ state: 'idle', progress: 0 });
	});

	it('refuses viewers (403) and bad settings (422 with field paths)', async () => {
		const good = { c: 3, p: 2, distance: 'position', zones: [] };
		expect((await viewer.json(`/api/runs/${runId}/settings`, 'PUT', good)).status).toBe(403);
		const bad = await engineer.json(`/api/runs/${runId}/settings`, 'PUT', {
			c: -1,
			p: 0.5,
			distance: 'position',
			zones: [{ name: 'kerb', coords: 'world', x: [5, 1], y: [0, 1] }]
		});
		expect(bad.status).toBe(422);
		const details = ((await bad.json()) as { error: { details: Record<string, string> } }).error
			.details;
		expect(Object.keys(details).sort()).toEqual(['c', 'p', 'zones.0.x']);
		const weights = await engineer.json(`/api/runs/${runId}/settings`, 'PUT', {
			...good,
			distance: 'state',
			weights: [1, 1]
		});
		expect(weights.status).toBe(422);
		expect(
			Object.keys(
				((await weights.json()) as { error: { details: Record<string, string> } }).error.details
			)
		).toEqual(['weights']);
		expect((await engineer.json(`/api/runs/${runId}/settings`, 'PUT', 'not json{')).status).toBe(
			400
		);
	});

	it('saves settings for an engineer and recomputes the stored columns in the background', async () => {
		// c = 3 and one world zone around T2: x 35..45, y −2..2.
		const settings = {
			c: 3,
			p: 2,
			distance: 'position',
			zones: [{ name: 'kerb', coords: 'world', x: [35, 45], y: [-2, 2] }],
			motThreshold: 2
		};
		const res = await engineer.json(`/api/runs/${runId}/settings`, 'PUT', settings);
		expect(res.status).toBe(200);
		expect(((await res.json()) as { recompute: { state: string } }).recompute.state).toMatch(
			/queued|running|done/
		);

		const deadline = Date.now() + 30_000;
		let status: { state: string; progress: number; error?: string } = {
			state: 'queued',
			progress: 0
		};
		const seen = new Set<string>();
		while (status.state !== 'done' && status.state !== 'failed') {
			expect(Date.now(), `recompute still ${status.state} at ${status.progress} %`).toBeLessThan(
				deadline
			);
			await new Promise((r) => setTimeout(r, 200));
			status = (
				(await (await viewer.json(`/api/runs/${runId}/settings`, 'GET')).json()) as {
					recompute: typeof status;
				}
			).recompute;
			seen.add(status.state);
		}
		expect(status).toMatchObject({ state: 'done', progress: 100 });

		const after = await rows();
		expect(after.settings).toMatchObject({ c: 3 });
		const f0 = after.rows[0];
		expect(f0).toMatchObject({ gospa_missed: 1, gospa_false: 2 });
		expect(f0.gospa).toBeCloseTo(Math.sqrt(14.5), 12);
		// kerb zone, f0: only b (40, 1) with σx = σy = 1 lies near it:
		// P(inside) = (Φ(5) − Φ(−5)) · (Φ((2 − 1)/1) − Φ((−2 − 1)/1)) (independent axes), r = 1.
		expect(f0.zones).not.toHaveProperty(lane);
		expect(f0.zones.kerb).toBeCloseTo(
			(normalCdf(5) - normalCdf(-5)) * (normalCdf(1) - normalCdf(-3)),
			9
		);
		const [stored] = await sqlClient()<{ gospa: number; nees_count: number }[]>`
			select gospa, nees_count from frames where run_id = ${runId} and seq = 0`;
		expect(stored.gospa).toBeCloseTo(Math.sqrt(14.5), 12);
		expect(stored.nees_count).toBe(1); // T2–b (1 m) is still assigned within c = 3

		// the cached summary was computed with c = 10: it is stale now and computed again
		const summary = (await (await viewer.json(`/api/runs/${runId}/summary`, 'GET')).json()) as {
			recomputed: boolean;
			settings: { c: number };
			summary: { gospa: { missedTotal: number; falseTotal: number } };
		};
		expect(summary.recomputed).toBe(true);
		expect(summary.settings.c).toBe(3);
		// c = 3: f0 and f3 miss T1 and have a and ghost false; f4 keeps both pairs, ghost false
		expect(summary.summary.gospa).toMatchObject({ missedTotal: 2, falseTotal: 5 });
	});
});

describe('Metric settings & summary page', () => {
	it('shows the figures and download links to every reader, the form only to those who configure', async () => {
		const page = await viewer.get(`/runs/${runId}/metrics`);
		expect(page.status).toBe(200);
		const html = await page.text();
		expect(html).toContain('Metric settings &amp; summary');
		expect(html).toContain(`/api/runs/${runId}/metrics?format=csv`);
		expect(html).not.toContain('Save and recompute');
		const own = await (await engineer.get(`/runs/${runId}/metrics`)).text();
		expect(own).toContain('Save and recompute');
	});

	it('refuses a bad form with the field errors in place, and a viewer with 403', async () => {
		const fields = {
			c: 'abc',
			p: '0.5',
			distance: 'position',
			nees: 'position',
			motThreshold: '2',
			weights: ''
		};
		const zone = {
			zone_name: 'kerb',
			zone_coords: 'world',
			zone_xmin: '5',
			zone_xmax: '1',
			zone_ymin: '0',
			zone_ymax: '1',
			zone_angle: ''
		};
		const res = await engineer.postForm(`/runs/${runId}/metrics?/settings`, { ...fields, ...zone });
		expect(res.status).toBe(400);
		const html = await res.text();
		expect(html).toContain('data-field-error="c"');
		expect(html).toContain('data-field-error="p"');
		expect(html).toContain('data-field-error="zones.0"');
		expect(
			(await viewer.postForm(`/runs/${runId}/metrics?/settings`, { ...fields, c: '5' })).status
		).toBe(403);
	});
});
