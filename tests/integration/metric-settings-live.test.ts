/**
 * Zones saved on a live run reach every frame stored after the save, through the real settings form, the real
 * socket and the real recompute job: the frames before the save are recomputed, those after are stored with the
 * new settings by ingest itself (nothing recomputes them later).
 *
 * Zone occupancy: 1 − Π(1 − r_i P_i(inside)), an estimate without covariance counting P_i = 1 when inside
 * (the definition tests/integration/metrics-api.test.ts checks), so one estimate with r = 0.8 inside gives 0.8.
 */
import { beforeAll, describe, expect, inject, it } from 'vitest';
import { defaultMetricSettings, type Zone } from '$lib/metrics';
import { SkeinRigClient } from '$lib/protocol/client';
import { toMsgpack } from '$lib/protocol/codec';
import { sqlClient } from '$server/db';
import type { FrameToStore } from '$server/ingest/contract';
import { PostgresIngestStore } from '$server/ingest/store';
import { saveSettings } from '$server/metrics/settings';
import { Browserish } from '../support/client';
import { makePerson } from '../support/factories';
import { makeRigWithKey } from '../support/rigs';

let base: string;
let engineer: Browserish;

beforeAll(async () => {
	base = inject('appUrl');
	const p = await makePerson('engineer', 'live-zones');
	engineer = new Browserish(base);
	await engineer.signIn(p.email, p.password);
});

const run = { name: 'live zones', state_fields: ['x', 'y'], measurement_fields: ['x', 'y'] };
const t0 = 1_790_200_000;
const frame = (i: number) => ({
	t: t0 + i * 0.05,
	ego: { x: 0, y: 0, heading: 0 },
	estimates: [{ id: 'e1', x: [10 + i * 0.01, 2], r: 0.8 }],
	truth: [{ id: 't1', x: [10 + i * 0.01, 2.2] }]
});

/** The settings form as the page posts it: the defaults, and a world zone "kerb" around the estimate. */
const formFields = {
	c: '10',
	p: '2',
	distance: 'position',
	nees: 'position',
	motThreshold: '2',
	weights: '',
	zone_name: 'kerb',
	zone_coords: 'world',
	zone_xmin: '0',
	zone_xmax: '100',
	zone_ymin: '-10',
	zone_ymax: '10',
	zone_angle: ''
};

async function liveRun(tag: string) {
	const rig = await makeRigWithKey(tag);
	const client = new SkeinRigClient({
		url: base.replace('http', 'ws') + '/ingest/v1',
		key: rig.secret,
		clientRunId: tag,
		run
	});
	const { runId } = await client.start();
	return { client, runId };
}

async function recomputeState(runId: string): Promise<string> {
	const res = await engineer.json(`/api/runs/${runId}/settings`, 'GET');
	return ((await res.json()) as { recompute: { state: string } }).recompute.state;
}

describe('zones saved on a live run', () => {
	it('reach every frame stored after the save, mid-stream and after the recompute finished', async () => {
		const { client, runId } = await liveRun('live-zones');
		let i = 0;
		for (; i < 40; i++) client.send(frame(i));
		await client.flush();
		const before = await sqlClient()<{ zones: Record<string, number> }[]>`
			select zones from frames where run_id = ${runId} and seq = 0`;
		expect(Object.keys(before[0].zones)).toEqual(defaultMetricSettings.zones.map((z) => z.name));

		// save while frames keep coming, every 20 ms
		const streaming = setInterval(() => client.send(frame(i++)), 20);
		await new Promise((r) => setTimeout(r, 300));
		const saved = await engineer.postForm(`/runs/${runId}/metrics?/settings`, formFields);
		expect(saved.status).toBe(200);
		await new Promise((r) => setTimeout(r, 300));
		clearInterval(streaming);
		await client.flush();

		const deadline = Date.now() + 30_000;
		let state = await recomputeState(runId);
		while (state !== 'done') {
			expect(state, 'the recompute').not.toBe('failed');
			expect(Date.now(), `recompute still ${state}`).toBeLessThan(deadline);
			await new Promise((r) => setTimeout(r, 100));
			state = await recomputeState(runId);
		}
		// the recompute is over: whatever is stored from now on, only ingest computes
		const afterRecompute = i;
		for (const end = i + 30; i < end; i++) client.send(frame(i));
		await client.flush();
		await client.close();

		const rows = await sqlClient()<{ seq: number; zones: Record<string, number> | null }[]>`
			select seq::int, zones from frames where run_id = ${runId} order by seq`;
		expect(rows).toHaveLength(i);
		expect(afterRecompute).toBeGreaterThan(40);
		const missing = rows.filter((r) => r.zones?.kerb === undefined).map((r) => r.seq);
		expect(missing, 'frames without the saved zone').toEqual([]);
		for (const r of rows) {
			expect(r.zones?.kerb, `frame ${r.seq}`).toBeCloseTo(0.8, 12);
			expect(Object.keys(r.zones ?? {}), `frame ${r.seq}: only the saved zone`).toEqual(['kerb']);
		}
	});

	it('refuses a zone name the database cannot store with 422 naming the field, and keeps the settings', async () => {
		const { client, runId } = await liveRun('zone-name');
		client.send(frame(0));
		await client.close();
		for (const name of ['ke\0rb', 'kerb\ud800']) {
			const settings = {
				...defaultMetricSettings,
				zones: [{ name, coords: 'world', x: [0, 10], y: [-1, 1] }]
			};
			const res = await engineer.json(`/api/runs/${runId}/settings`, 'PUT', settings);
			expect(res.status, JSON.stringify(name)).toBe(422);
			const body = (await res.json()) as { error: { details?: Record<string, string> } };
			expect(Object.keys(body.error.details ?? {}), JSON.stringify(name)).toContain('zones.0.name');
			// a form cannot carry an unpaired surrogate (it is sent as U+FFFD), a NUL it can
			if (name.includes('\ud800')) continue;
			const form = await engineer.postForm(`/runs/${runId}/metrics?/settings`, {
				...formFields,
				zone_name: name
			});
			expect(form.status, JSON.stringify(name)).toBe(400);
			const html = await form.text();
			expect(html).toContain('data-field-error="zones.0"');
			expect(html).toContain('name: contains a');
		}
		const [row] = await sqlClient()<{ metric_settings: unknown }[]>`
			select metric_settings from runs where id = ${runId}`;
		expect(row.metric_settings).toEqual(defaultMetricSettings);
	});

	it('stores rows computed before a save, and committed after it, computed again with the saved settings', async () => {
		// in the store itself: frames prepared (metrics computed) with the old settings, then the save commits,
		// then the batch commits; it must not store what was computed before the save
		const rig = await makeRigWithKey('prepared-before');
		const store = new PostgresIngestStore(sqlClient(), false);
		const opened = await store.openRun({
			rig: { rigId: rig.rigId, keyId: rig.keyId },
			clientRunId: 'prepared-before',
			spec: run
		});
		if (!opened.ok) throw new Error(opened.reason);
		const batch = [0, 1, 2].map((seq): FrameToStore => {
			const f = { seq, ...frame(seq) };
			return { seq, t: f.t, frame: f, decoded: f, raw: toMsgpack({ type: 'frame', ...f }) };
		});
		for (const f of batch) store.prepareFrame(opened.runId, f);
		const kerb: Zone = { name: 'kerb', coords: 'world', x: [0, 100], y: [-10, 10] };
		await saveSettings(opened.runId, { ...defaultMetricSettings, zones: [kerb] });
		await store.commitFrames(opened.runId, batch, []);
		const rows = await sqlClient()<{ zones: Record<string, number> }[]>`
			select zones from frames where run_id = ${opened.runId} order by seq`;
		expect(rows.map((r) => r.zones)).toEqual([{ kerb: 0.8 }, { kerb: 0.8 }, { kerb: 0.8 }]);
		// and live viewers get the metrics that were stored
		expect(batch.map((f) => f.metrics?.zones)).toEqual([
			{ kerb: 0.8 },
			{ kerb: 0.8 },
			{ kerb: 0.8 }
		]);
	});
});
