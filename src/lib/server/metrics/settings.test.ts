import { describe, expect, it } from 'vitest';
import { checkSettings } from './settings';

describe('checkSettings', () => {
	it('keys problems by field path', () => {
		const r = checkSettings(
			{
				c: 0,
				p: 2,
				distance: 'position',
				zones: [{ name: 'a', coords: 'ego', x: [1, 0], y: [0, 1] }]
			},
			['x', 'y']
		);
		expect(r.ok).toBe(false);
		if (!r.ok) expect(Object.keys(r.errors).sort()).toEqual(['c', 'zones.0.x']);
	});

	it('checks weights against the state fields', () => {
		const r = checkSettings({ c: 5, p: 1, distance: 'state', weights: [1], zones: [] }, [
			'x',
			'y',
			'vx'
		]);
		expect(r).toEqual({ ok: false, errors: { weights: 'need 3 (one per state field), got 1' } });
		expect(
			checkSettings({ c: 5, p: 1, distance: 'state', weights: [1, 1, 0], zones: [] }, [
				'x',
				'y',
				'vx'
			]).ok
		).toBe(true);
	});
});
