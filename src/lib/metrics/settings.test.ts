import { describe, expect, it } from 'vitest';
import { defaultMetricSettings, parseMetricSettings } from './settings';

const withZone = (name: string) => ({
	...defaultMetricSettings,
	zones: [{ name, coords: 'world', x: [0, 10], y: [-1, 1] }]
});

describe('parseMetricSettings', () => {
	it('refuses zone names the database cannot store as jsonb keys, naming the field', () => {
		expect(parseMetricSettings(withZone('kerb 🚧')).ok).toBe(true);
		expect(parseMetricSettings(withZone('ke\0rb'))).toEqual({
			ok: false,
			errors: ['zones.0.name: contains a NUL character (U+0000) at index 2']
		});
		expect(parseMetricSettings(withZone('kerb\ud800'))).toEqual({
			ok: false,
			errors: ['zones.0.name: contains an unpaired surrogate (U+D800) at index 4']
		});
	});
});
