import { describe, expect, it } from 'vitest';
import { colorNumber, setColors, withAlpha } from './set-colors';

describe('set colours', () => {
	it('hold the design values (shared/DESIGN.md, "Look")', () => {
		expect(setColors).toEqual({
			measurement: '#C07A12',
			estimate: '#0E7C74',
			truth: '#8E2C66',
			ego: '#243B6B',
			zone: '#4F46E5'
		});
	});
	it('convert for pixi and for CSS', () => {
		expect(colorNumber(setColors.estimate)).toBe(0x0e7c74);
		expect(withAlpha(setColors.estimate, 0.35)).toBe('rgba(14,124,116,0.35)');
		expect(withAlpha(setColors.zone, 0.5)).toBe('rgba(79,70,229,0.5)');
	});
});
