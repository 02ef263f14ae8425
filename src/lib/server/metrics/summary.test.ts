import { describe, expect, it } from 'vitest';
import { defaultMetricSettings } from '$lib/metrics';
import type { MetricRun } from './run';
import { canonicalJson, isFresh, summaryUnits } from './summary';

const run: MetricRun = {
	id: 'r',
	name: 'loop',
	status: 'ended',
	stateFields: ['x', 'y'],
	coords: 'world',
	lengthUnit: 'm',
	frameCount: 10,
	nextSeq: 10,
	settings: defaultMetricSettings
};

describe('summary cache', () => {
	it('compares settings whatever order jsonb gave their keys', () => {
		expect(canonicalJson({ b: 1, a: [{ d: 2, c: 3 }], e: undefined })).toBe(
			'{"a":[{"c":3,"d":2}],"b":1}'
		);
		const reordered = JSON.parse(JSON.stringify({ ...defaultMetricSettings, c: 10 })) as Record<
			string,
			unknown
		>;
		const cached = {
			format: 1,
			settings: Object.fromEntries(Object.entries(reordered).reverse()),
			frames: 10,
			next_seq: 10
		};
		expect(isFresh(cached, run)).toBe(true);
	});

	it('is stale after new frames, other settings or a format change', () => {
		const cached = { format: 1, settings: defaultMetricSettings, frames: 10, next_seq: 10 };
		expect(isFresh({ ...cached, frames: 9, next_seq: 9 }, run)).toBe(false);
		expect(isFresh({ ...cached, settings: { ...defaultMetricSettings, c: 3 } }, run)).toBe(false);
		expect(isFresh({ ...cached, format: 0 }, run)).toBe(false);
		expect(isFresh(null, run)).toBe(false);
	});

	it('writes the localisation unit as the p-th power of the length unit', () => {
		expect(summaryUnits('m', 2).gospa_localization).toBe('m^2');
		expect(summaryUnits('m', 1).gospa_localization).toBe('m');
	});
});
