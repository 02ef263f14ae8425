/** The Runs table's search (GET /api/runs) and one run (GET /api/runs/{id}): filters, sorts, pages and the Run shape. */
import { randomBytes } from 'node:crypto';
import { beforeAll, describe, expect, inject, it } from 'vitest';
import type { Run, RunList, RunResponse } from '$lib/api-types';
import { sqlClient } from '$server/db';
import { Browserish } from '../support/client';
import { makePerson } from '../support/factories';
import { makeRigWithKey } from '../support/rigs';

let reader: Browserish;
let rigId: string;
let rigName: string;
const ids: Record<string, string> = {};
/** device time of the first frame of `harbour`: 2026-09-01 00:00 UTC */
const t0 = Date.UTC(2026, 8, 1) / 1000;
const day = 86_400;
/** a word only this file's runs carry, for the text search */
const word = `zq${randomBytes(3).toString('hex')}`;

/** The fields of a Run, as GET /api/runs/{id} has always answered them. */
const runFields: (keyof Run)[] = [
	'id',
	'rig_id',
	'rig_name',
	'client_run_id',
	'name',
	'state_fields',
	'measurement_fields',
	'coords',
	'length_unit',
	'tags',
	'notes',
	'status',
	'started_at',
	'recorded_at',
	'ended_at',
	'first_t',
	'last_t',
	'next_seq',
	'frame_count',
	'quarantine_count',
	'kept',
	'metric_settings',
	'duration_s',
	'frame_rate_hz'
];

async function addRun(
	key: string,
	run: {
		name: string;
		status: string;
		tags?: string[];
		notes?: string;
		firstT?: number;
		frames?: number;
		gospa?: number[];
		rig?: string;
	}
) {
	const sql = sqlClient();
	const frames = run.frames ?? 0;
	const lastT = run.firstT === undefined ? null : run.firstT + Math.max(frames - 1, 0) * 0.1;
	const [row] = await sql<{ id: string }[]>`
		insert into runs (rig_id, name, state_fields, measurement_fields, status, tags, notes, first_t, last_t,
			frame_count, next_seq, ended_at)
		values (${run.rig ?? rigId}, ${run.name}, ${['x', 'y']}, ${['x', 'y']}, ${run.status}, ${run.tags ?? []},
			${run.notes ?? ''}, ${run.firstT ?? null}, ${lastT}, ${frames}, ${frames},
			${run.status === 'ended' ? new Date(Date.UTC(2026, 8, 2)).toISOString() : null}::timestamptz)
		returning id`;
	ids[key] = row.id;
	if (run.firstT !== undefined && frames > 0) {
		await sql`select skein_ensure_frames_partition(to_timestamp(${run.firstT}))`;
		const t = run.firstT;
		await sql`insert into frames ${sql(
			Array.from({ length: frames }, (_, k) => ({
				run_id: row.id,
				seq: k,
				t: t + k * 0.1,
				ts: new Date((t + k * 0.1) * 1000).toISOString(),
				data: Buffer.from([0x80]),
				gospa: run.gospa?.[k] ?? null
			}))
		)}`;
	}
}

beforeAll(async () => {
	const p = await makePerson('viewer', 'runs-search');
	reader = new Browserish(inject('appUrl'));
	await reader.signIn(p.email, p.password);
	const rig = await makeRigWithKey(`search-${word}`);
	rigId = rig.rigId;
	rigName = rig.rigName;
	const other = await makeRigWithKey('search-other');
	await addRun('harbour', {
		name: 'Harbour loop',
		status: 'ended',
		tags: ['night', 'harbour'],
		firstT: t0,
		frames: 11,
		gospa: [1, 3, 1, 3, 1, 3, 1, 3, 1, 3, 2]
	});
	await addRun('apron', {
		name: 'airport apron',
		status: 'live',
		tags: ['day'],
		firstT: t0 + 3 * day,
		frames: 2,
		gospa: [9, 9]
	});
	await addRun('zulu', {
		name: 'Zulu 100% sure',
		status: 'ended',
		notes: 'crossing under the bridge',
		firstT: t0 + day,
		frames: 3,
		gospa: [5, 5, 5]
	});
	// no frames: recorded when it was opened (now), no GOSPA mean
	await addRun('bridge', { name: 'bridge', status: 'interrupted' });
	await addRun('elsewhere', {
		name: 'Harbour on another rig',
		status: 'ended',
		tags: ['harbour'],
		rig: other.rigId
	});
});

async function search(query: string): Promise<RunList> {
	const res = await reader.json(`/api/runs?${query}`, 'GET');
	expect(res.status).toBe(200);
	return (await res.json()) as RunList;
}

/** the names of the runs of the page, in order */
const names = (list: RunList) => list.runs.map((r) => r.name);

describe('GET /api/runs/{id}', () => {
	it('answers the run with the fields it always had, times in ISO 8601 and the derived figures', async () => {
		const res = await reader.json(`/api/runs/${ids.harbour}`, 'GET');
		expect(res.status).toBe(200);
		const { run } = (await res.json()) as RunResponse;
		expect(Object.keys(run).sort()).toEqual([...runFields].sort());
		expect(run).toMatchObject({
			id: ids.harbour,
			rig_id: rigId,
			rig_name: rigName,
			client_run_id: null,
			name: 'Harbour loop',
			state_fields: ['x', 'y'],
			coords: 'world',
			length_unit: 'm',
			tags: ['night', 'harbour'],
			status: 'ended',
			recorded_at: '2026-09-01T00:00:00.000Z',
			ended_at: '2026-09-02T00:00:00.000Z',
			first_t: t0,
			next_seq: 11,
			frame_count: 11,
			quarantine_count: 0,
			kept: false,
			metric_settings: null
		});
		expect(new Date(run.started_at).toISOString()).toBe(run.started_at);
		expect(run.duration_s).toBeCloseTo(1, 9);
		expect(run.frame_rate_hz).toBeCloseTo(10, 6);
	});

	it('answers 404 for a run that does not exist', async () => {
		const res = await reader.json(`/api/runs/00000000-0000-4000-8000-000000000000`, 'GET');
		expect(res.status).toBe(404);
	});
});

describe('GET /api/runs', () => {
	it('lists a rig’s runs live first, then by when they were recorded, newest first, with the total', async () => {
		const list = await search(`rig=${rigId}`);
		expect(list.total).toBe(4);
		expect(names(list)).toEqual(['airport apron', 'bridge', 'Zulu 100% sure', 'Harbour loop']);
		const row = list.runs.find((r) => r.id === ids.harbour)!;
		expect(Object.keys(row).sort()).toEqual([...runFields, 'gospa_mean'].sort());
		expect(row.gospa_mean).toBeCloseTo(2, 9);
		expect(list.runs.find((r) => r.id === ids.bridge)!.gospa_mean).toBeNull();
	});

	it('filters by status and by tag', async () => {
		expect(names(await search(`rig=${rigId}&status=ended`))).toEqual([
			'Zulu 100% sure',
			'Harbour loop'
		]);
		expect(names(await search(`rig=${rigId}&tag=harbour`))).toEqual(['Harbour loop']);
		const tagged = await search(`tag=harbour&q=${word}`);
		expect(names(tagged)).toEqual(['Harbour loop']);
	});

	it('finds text in the name, the rig’s name, the notes and the tags, case-insensitively, % and _ literally', async () => {
		expect(names(await search(`rig=${rigId}&q=HARBOUR`))).toEqual(['Harbour loop']);
		expect((await search(`q=${word}`)).total).toBe(4);
		expect(names(await search(`rig=${rigId}&q=${encodeURIComponent('under the')}`))).toEqual([
			'Zulu 100% sure'
		]);
		expect(names(await search(`rig=${rigId}&q=nigh`))).toEqual(['Harbour loop']);
		expect(names(await search(`rig=${rigId}&q=${encodeURIComponent('0% s')}`))).toEqual([
			'Zulu 100% sure'
		]);
		expect((await search(`rig=${rigId}&q=${encodeURIComponent('%')}`)).total).toBe(1);
		expect((await search(`rig=${rigId}&q=_`)).total).toBe(0);
	});

	it('filters by the day recorded, both ends inclusive (UTC)', async () => {
		expect(names(await search(`rig=${rigId}&since=2026-09-02&until=2026-09-04`))).toEqual([
			'airport apron',
			'Zulu 100% sure'
		]);
		expect(names(await search(`rig=${rigId}&until=2026-09-01`))).toEqual(['Harbour loop']);
		expect(names(await search(`rig=${rigId}&since=2026-09-05`))).toEqual(['bridge']);
	});

	it('sorts by name, duration, frames and GOSPA mean in either direction, live first and empty last', async () => {
		const orders: [sort: string, dir: string, names: string[]][] = [
			['name', 'asc', ['airport apron', 'bridge', 'Harbour loop', 'Zulu 100% sure']],
			['gospa', 'asc', ['airport apron', 'Harbour loop', 'Zulu 100% sure', 'bridge']],
			['gospa', 'desc', ['airport apron', 'Zulu 100% sure', 'Harbour loop', 'bridge']],
			['frames', 'desc', ['airport apron', 'Harbour loop', 'Zulu 100% sure', 'bridge']],
			['duration', 'asc', ['airport apron', 'Zulu 100% sure', 'Harbour loop', 'bridge']]
		];
		for (const [sort, dir, want] of orders)
			expect(names(await search(`rig=${rigId}&sort=${sort}&dir=${dir}`)), `${sort} ${dir}`).toEqual(
				want
			);
	});

	it('pages with limit and offset, the total counting every match', async () => {
		const page = await search(`rig=${rigId}&sort=name&dir=asc&limit=2&offset=1`);
		expect(page.total).toBe(4);
		expect(names(page)).toEqual(['bridge', 'Harbour loop']);
		const past = await search(`rig=${rigId}&limit=2&offset=10`);
		expect(past).toEqual({ total: 0, runs: [] });
	});
});
