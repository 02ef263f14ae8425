import { describe, expect, it } from 'vitest';
import type { Frame } from '../protocol/types';
import { evaluateFrame, frameMetrics, type FrameContext } from './frame';
import { gospa } from './gospa';
import { defaultMetricSettings, parseMetricSettings } from './settings';
import { RunSummaryAccumulator } from './summary';
import { seededNormal } from '../random';

const stateFields = ['x', 'vx', 'y', 'vy'];
const ctx: FrameContext = { stateFields, settings: defaultMetricSettings, coords: 'ego' };
const diag = (a: number, b: number, c: number, d: number) => [
	a,
	0,
	0,
	0,
	0,
	b,
	0,
	0,
	0,
	0,
	c,
	0,
	0,
	0,
	0,
	d
];

describe('frameMetrics', () => {
	const frame: Frame = {
		seq: 1,
		t: 100,
		measurements: [{ z: [1, 2] }, { z: [3, 4] }, { z: [5, 6] }],
		estimates: [
			{ id: 1, x: [10, 5, 0, 0], P: diag(4, 1, 1, 1), r: 0.9 },
			{ id: 2, x: [40, 0, 30, 0], r: 0.5 }
		],
		truth: [
			{ id: 'a', x: [12, 5, 1, 0] },
			{ id: 'b', x: [-30, 0, 0, 0] }
		]
	};

	it('computes the per-frame record from positions picked by field name', () => {
		const m = frameMetrics(frame, ctx);
		const direct = gospa(
			[
				[12, 1],
				[-30, 0]
			],
			[
				[10, 0],
				[40, 30]
			],
			{ c: 10, p: 2 }
		);
		expect(m).toMatchObject({
			n_truth: 2,
			n_estimates: 2,
			n_measurements: 3,
			gospa_missed: 1,
			gospa_false: 1,
			nees_count: 1
		});
		expect(m.expected_cardinality).toBeCloseTo(1.4, 14);
		expect(m.gospa).toBeCloseTo(direct.gospa, 14);
		expect(m.gospa_localization).toBeCloseTo(5, 14); // 2² + 1²
		expect(m.ospa).toBeCloseTo(direct.ospa.ospa, 14);
		// Worked by hand: e = (−2, −1) on the x, y block diag(4, 1): 4/4 + 1/1 = 2.
		expect(m.nees_mean).toBeCloseTo(2, 14);
		// Estimate 1 sits in the lane (x 10 ± 2, y 0 ± 1), estimate 2 is a point outside.
		expect(m.zones['ego lane 0–20 m']).toBeGreaterThan(0.9 * 0.85);
		expect(m.zones['ego lane 0–20 m']).toBeLessThan(0.9);
		expect(JSON.parse(JSON.stringify(m))).toEqual(m);
	});

	it('tells "not reported" from "reported empty"', () => {
		const noTruth = frameMetrics({ ...frame, truth: undefined }, ctx);
		expect(noTruth).toMatchObject({
			n_truth: null,
			gospa: null,
			ospa: null,
			nees_mean: null,
			n_estimates: 2
		});
		const emptyTruth = frameMetrics({ ...frame, truth: [] }, ctx);
		expect(emptyTruth.gospa).toBeCloseTo(Math.sqrt(50 * 2), 12); // two false at c²/2 each
		const nothing = frameMetrics({ seq: 0, t: 0 }, ctx);
		expect(nothing).toMatchObject({
			n_estimates: null,
			expected_cardinality: null,
			n_measurements: null,
			zones: {}
		});
		const bothEmpty = frameMetrics({ seq: 0, t: 0, truth: [], estimates: [] }, ctx);
		expect(bothEmpty).toMatchObject({
			gospa: 0,
			ospa: 0,
			expected_cardinality: 0,
			zones: { 'ego lane 0–20 m': 0 }
		});
	});

	it('moves world-coordinate estimates into the ego frame for ego zones', () => {
		const world: FrameContext = { ...ctx, coords: 'world' };
		const f: Frame = {
			seq: 2,
			t: 0,
			ego: { x: 500, y: 200, heading: Math.PI },
			estimates: [{ x: [490, 0, 200, 0] }]
		};
		// Heading π: 10 m west of the ego in the world is 10 m ahead.
		expect(frameMetrics(f, world).zones['ego lane 0–20 m']).toBe(1);
		expect(frameMetrics({ ...f, ego: undefined }, world).zones).toEqual({});
	});

	it('uses the weighted full state when asked, and NEES on the full state', () => {
		const settings = {
			...defaultMetricSettings,
			distance: 'state' as const,
			weights: [1, 4, 1, 0],
			nees: 'state' as const
		};
		const e = evaluateFrame(
			{
				seq: 3,
				t: 0,
				truth: [{ x: [0, 0, 0, 0] }],
				estimates: [{ x: [1, 1, 1, 7], P: diag(1, 1, 1, 49) }]
			},
			{ ...ctx, settings }
		);
		// d² = 1 + 4·1 + 1 + 0 = 6; NEES = 1 + 1 + 1 + 49/49 = 4.
		expect(e.metrics.gospa_localization).toBeCloseTo(6, 14);
		expect(e.nees[0]).toBeCloseTo(4, 14);
		const short = frameMetrics(
			{ seq: 3, t: 0, truth: [{ x: [0, 0] }], estimates: [] },
			{ ...ctx, settings }
		);
		expect(short.gospa).toBeNull();
	});

	it('rejects state fields without x and y', () => {
		expect(() => frameMetrics(frame, { ...ctx, stateFields: ['x', 'vx'] })).toThrow(RangeError);
	});
});

describe('parseMetricSettings', () => {
	it('accepts the defaults and rejects bad input with readable errors', () => {
		expect(parseMetricSettings(defaultMetricSettings)).toEqual({
			ok: true,
			settings: defaultMetricSettings
		});
		const bad = parseMetricSettings({ ...defaultMetricSettings, c: -1, p: 0.5 });
		expect(bad.ok).toBe(false);
		if (!bad.ok) expect(bad.errors.join('\n')).toMatch(/^c: .*\n^p: /m);
		const dup = parseMetricSettings({
			...defaultMetricSettings,
			zones: [...defaultMetricSettings.zones, ...defaultMetricSettings.zones]
		});
		expect(dup.ok).toBe(false);
		const weights = parseMetricSettings({ ...defaultMetricSettings, weights: [1, 1] }, stateFields);
		expect(weights).toEqual({
			ok: false,
			errors: ['weights: need 4 (one per state field), got 2']
		});
		expect(
			parseMetricSettings({
				...defaultMetricSettings,
				zones: [{ name: 'z', coords: 'ego', x: [5, 1], y: [0, 1] }]
			}).ok
		).toBe(false);
		expect(parseMetricSettings('nope').ok).toBe(false);
	});
});

describe('RunSummaryAccumulator', () => {
	it('summarises a small run by hand', () => {
		const acc = new RunSummaryAccumulator(ctx);
		// Frame 1: one truth matched at 1.5 m (GOSPA 1.5, inside the 2 m MOT gate). Frame 2: truth missed (GOSPA √50). Frame 3: no truth.
		acc.add({
			seq: 1,
			t: 0,
			truth: [{ id: 'a', x: [0, 0, 0, 0] }],
			estimates: [{ id: 1, x: [1.5, 0, 0, 0] }]
		});
		acc.add({ seq: 2, t: 0.05, truth: [{ id: 'a', x: [0, 0, 0, 0] }], estimates: [] });
		acc.add({ seq: 3, t: 0.1, estimates: [{ id: 1, x: [5, 0, 0, 0], r: 0.5 }] });
		const s = acc.result();
		expect(s.frames).toBe(3);
		expect(s.framesWithTruth).toBe(2);
		expect(s.gospa?.mean).toBeCloseTo((1.5 + Math.sqrt(50)) / 2, 12);
		expect(s.gospa?.rms).toBeCloseTo(Math.sqrt((2.25 + 50) / 2), 12);
		expect(s.gospa).toMatchObject({ missedTotal: 1, falseTotal: 0, frames: 2 });
		expect(s.cardinality).toMatchObject({ frames: 2, errorMean: -0.5 });
		expect(s.zones['ego lane 0–20 m']).toMatchObject({
			frames: 3,
			mean: (1 + 0 + 0.5) / 3,
			max: 1
		});
		expect(s.tracks).toMatchObject({ matches: 1, misses: 1, falsePositives: 0, mota: 0.5 }); // 1 − 1/2;
		expect(s.nees).toBeNull();
		expect(JSON.parse(JSON.stringify(s))).toEqual(s);
	});

	it('gives the NEES verdict for consistent and overconfident trackers (simulated, fixed seed)', () => {
		const normal = seededNormal(61);
		const run = (claimedScale: number) => {
			const acc = new RunSummaryAccumulator(ctx);
			for (let k = 0; k < 400; k++) {
				const truth = [{ x: [0, 0, 0, 0] }];
				// True error covariance diag(1, ·, 4, ·); the tracker claims claimedScale times that.
				const est = {
					x: [normal(), 0, 2 * normal(), 0],
					P: diag(claimedScale, 1, 4 * claimedScale, 1)
				};
				acc.add({ seq: k, t: k / 20, truth, estimates: [est] });
			}
			return acc.result().nees;
		};
		const consistent = run(1);
		expect(consistent?.samples).toBe(400);
		expect(consistent?.dim).toBe(2);
		expect(consistent?.verdict).toBe('consistent');
		expect(run(0.5)?.verdict).toBe('overconfident');
		expect(run(2)?.verdict).toBe('underconfident');
	});

	it('re-averages NEES from stored rows with their counts', () => {
		const acc = new RunSummaryAccumulator(ctx);
		const row = frameMetrics({ seq: 0, t: 0, truth: [], estimates: [] }, ctx);
		acc.addMetrics({ ...row, nees_mean: 1, nees_count: 3 });
		acc.addMetrics({ ...row, nees_mean: 5, nees_count: 1 });
		expect(acc.result().nees?.mean).toBe(2);
		expect(acc.result().tracks).toBeNull();
	});
});
