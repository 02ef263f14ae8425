import { describe, expect, it } from 'vitest';
import { defaultMetricSettings, parseMetricSettings } from '$lib/metrics';
import { draftFromForm, draftOf, inputOf } from './settings-form';

describe('settings form', () => {
	it('round-trips the defaults through the form fields', () => {
		const d = draftOf(defaultMetricSettings);
		const form = new FormData();
		for (const k of ['c', 'p', 'distance', 'nees', 'motThreshold', 'weights'] as const)
			form.set(k, d[k]);
		for (const z of d.zones) for (const [k, v] of Object.entries(z)) form.append(`zone_${k}`, v);
		const { input, errors } = inputOf(draftFromForm(form));
		expect(errors).toEqual({});
		const parsed = parseMetricSettings(input, ['x', 'y', 'vx', 'vy']);
		expect(parsed).toEqual({ ok: true, settings: defaultMetricSettings });
	});

	it('turns degrees into radians and reports unreadable numbers under their paths', () => {
		const d = draftOf({
			...defaultMetricSettings,
			zones: [{ name: 'bend', coords: 'world', x: [0, 10], y: [-1, 1], angle: Math.PI / 2 }]
		});
		expect(d.zones[0].angle).toBe('90');
		const { input, errors } = inputOf({
			...d,
			c: '',
			p: 'two',
			zones: [{ ...d.zones[0], xmax: '' }]
		});
		expect(errors).toEqual({
			c: 'enter a number',
			p: 'must be a number',
			'zones.0.x': 'enter a number'
		});
		expect((input.zones as { angle: number }[])[0].angle).toBeCloseTo(Math.PI / 2, 12);
	});

	it('reads weights only for the state distance', () => {
		const d = draftOf(defaultMetricSettings);
		expect(inputOf({ ...d, distance: 'state', weights: '1, 1, 0.5, 0.5' }).input.weights).toEqual([
			1, 1, 0.5, 0.5
		]);
		expect(inputOf({ ...d, distance: 'state', weights: '1,,2' }).errors.weights).toBeDefined();
		expect(inputOf({ ...d, distance: 'position', weights: '1,2' }).input.weights).toBeUndefined();
	});
});
