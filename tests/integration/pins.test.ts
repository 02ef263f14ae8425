/** Pins API: who may pin, what is refused with which message, and that a refused pin stores nothing. */
import { beforeAll, describe, expect, inject, it } from 'vitest';
import { sqlClient } from '$server/db';
import { Browserish } from '../support/client';
import { makePerson } from '../support/factories';
import { makeRigWithKey } from '../support/rigs';

let triage: Browserish;
let viewer: Browserish;
let runId: string;
const view = {
	coords: 'world',
	zoom: 8,
	cx: 1,
	cy: 2,
	layers: ['estimates', 'truth'],
	sigma: 2,
	selected: 'e:3'
};
const good = {
	title: 'Missed cyclist at the crossing',
	note: 'behind the van',
	category: 'missed object',
	severity: 'high',
	t: 1.5,
	view
};

beforeAll(async () => {
	const base = inject('appUrl');
	triage = new Browserish(base);
	viewer = new Browserish(base);
	const t = await makePerson('triage', 'pins-triage');
	const v = await makePerson('viewer', 'pins-viewer');
	await triage.signIn(t.email, t.password);
	await viewer.signIn(v.email, v.password);
	const rig = await makeRigWithKey('pins');
	const sql = sqlClient();
	const t0 = 1_790_100_000;
	const [run] = await sql<{ id: string }[]>`
		insert into runs (rig_id, name, state_fields, measurement_fields, status, first_t, last_t, frame_count, next_seq)
		values (${rig.rigId}, 'pins run', ${['x', 'y']}, ${['x', 'y']}, 'ended', ${t0}, ${t0 + 4.95}, 100, 100) returning id`;
	runId = run.id;
	await sql`select skein_ensure_frames_partition(to_timestamp(${t0}))`;
	const rows = Array.from({ length: 100 }, (_, k) => ({
		run_id: runId,
		seq: k,
		t: t0 + k * 0.05,
		ts: new Date((t0 + k * 0.05) * 1000).toISOString(),
		data: Buffer.from([0x80])
	}));
	await sql`insert into frames ${sql(rows)}`;
});

const count = async () =>
	(
		await sqlClient()<{ n: number }[]>`select count(*)::int as n from pins where run_id = ${runId}`
	)[0].n;

describe('pins API', () => {
	it('pins a moment with its view, at the frame at or before t, and keeps the run', async () => {
		const res = await triage.json(`/api/runs/${runId}/pins`, 'POST', good);
		expect(res.status).toBe(201);
		const { pin } = (await res.json()) as { pin: Record<string, unknown> };
		expect(pin).toMatchObject({
			title: good.title,
			category: 'missed object',
			severity: 'high',
			t: 1.5,
			seq: 30,
			status: 'open',
			view
		});
		const [run] = await sqlClient()<{ kept: boolean }[]>`select kept from runs where id = ${runId}`;
		expect(run.kept).toBe(true);
		const list = (await (await viewer.json(`/api/runs/${runId}/pins`, 'GET')).json()) as {
			pins: { id: string }[];
		};
		expect(list.pins.map((p) => p.id)).toContain(pin.id);
		const all = (await (await viewer.json('/api/pins', 'GET')).json()) as {
			pins: { id: string }[];
			total: number;
		};
		expect(all.pins[0].id).toBe(pin.id);
	});

	it('refuses bad input with a clear message per field and stores nothing', async () => {
		const before = await count();
		const cases: [unknown, number, string, string][] = [
			[{ ...good, title: '  ' }, 422, 'title', 'give the pin a title'],
			[{ ...good, category: 'gremlins' }, 422, 'category', 'category must be one of'],
			[{ ...good, severity: 'apocalyptic' }, 422, 'severity', 'severity must be one of'],
			[{ ...good, t: -1 }, 422, 't', 't must be ≥ 0'],
			[{ ...good, t: 99 }, 422, 't', 't must be within the run'],
			[{ ...good, view: { zoom: -1 } }, 422, 'view.zoom', ''],
			['{"title": ', 400, '', 'The body must be JSON']
		];
		for (const [body, status, field, message] of cases) {
			const res = await triage.json(`/api/runs/${runId}/pins`, 'POST', body);
			expect(res.status, JSON.stringify(body)).toBe(status);
			const err = (
				(await res.json()) as {
					error: { code: string; message: string; details?: Record<string, string> };
				}
			).error;
			if (field) expect(err.details?.[field], field).toContain(message);
			else expect(err.message).toContain(message);
		}
		expect(await count()).toBe(before);
	});

	it('a viewer reads pins but may not pin (API and form action)', async () => {
		const before = await count();
		expect((await viewer.json(`/api/runs/${runId}/pins`, 'POST', good)).status).toBe(403);
		expect((await viewer.postForm(`/runs/${runId}?/pin`, { title: 'x' })).status).toBe(403);
		expect((await viewer.json(`/api/runs/${runId}/pins`, 'GET')).status).toBe(200);
		expect(await count()).toBe(before);
	});

	it('the pin form action validates like the API', async () => {
		const before = await count();
		const res = await triage.postForm(`/runs/${runId}?/pin`, {
			title: '',
			category: 'other',
			severity: 'low',
			t: '1',
			view: JSON.stringify(view)
		});
		expect(res.status).toBe(400);
		expect(await count()).toBe(before);
		const ok = await triage.postForm(`/runs/${runId}?/pin`, {
			title: 'Label switch',
			category: 'label switch',
			severity: 'medium',
			t: '2',
			view: JSON.stringify(view)
		});
		expect(ok.status).toBe(200);
		expect(await count()).toBe(before + 1);
	});
});
