import { describe, expect, it } from 'vitest';
import { apply, compose, ellipse, niceLength, rigidBetween } from './geometry';

describe('scene geometry', () => {
	it('world → ego → world is the identity', () => {
		const ego = { x: 10, y: -4, heading: 0.7 };
		const there = rigidBetween('world', 'ego', ego);
		const back = rigidBetween('ego', 'world', ego);
		const [x, y] = apply(compose(back, there), 3, 5);
		expect(x).toBeCloseTo(3);
		expect(y).toBeCloseTo(5);
		// a point 5 m straight ahead of the ego
		const [ax, ay] = apply(there, 10 + 5 * Math.cos(0.7), -4 + 5 * Math.sin(0.7));
		expect(ax).toBeCloseTo(5);
		expect(ay).toBeCloseTo(0);
	});

	it('covariance ellipse axes and angle', () => {
		const e = ellipse(4, 0, 1, 2)!;
		expect(e.rx).toBeCloseTo(4);
		expect(e.ry).toBeCloseTo(2);
		expect(e.angle).toBeCloseTo(0);
		expect(ellipse(1, 0, 4, 1)!.angle).toBeCloseTo(Math.PI / 2);
		expect(ellipse(-1, 0, 1, 1)).toBeNull();
	});

	it('scale bar lengths', () => {
		expect(niceLength(10)).toBe(10);
		expect(niceLength(3)).toBe(50);
	});
});
