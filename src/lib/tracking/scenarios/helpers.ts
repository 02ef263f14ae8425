import type { Vec4 } from '../motion';
import type { Rng } from '../../random';
import type { Manoeuvre, WorldObjectView } from './types';

/** True when no live object (and not the ego, if given) is within `clear` metres of (x, y). */
export function entryFree(
	live: readonly WorldObjectView[],
	x: number,
	y: number,
	clear: number,
	ego?: { x: number; y: number }
): boolean {
	if (ego && Math.hypot(ego.x - x, ego.y - y) < clear) return false;
	return live.every((o) => Math.hypot(o.s[0] - x, o.s[1] - y) >= clear);
}

/** A state moving at `speed` along `heading`. */
export function moving(x: number, y: number, heading: number, speed: number): Vec4 {
	return [x, y, speed * Math.cos(heading), speed * Math.sin(heading)];
}

/**
 * Two opposite turns that shift an object sideways by `offset` metres (+ is left) while keeping its
 * heading, taking 2·halfS seconds: the heading ramps up and back, the lateral offset is v·ω·halfS².
 */
export function laneChange(speed: number, offset: number, halfS: number): Manoeuvre[] {
	const omega = offset / (speed * halfS * halfS);
	return [
		{ duration: halfS, turnRate: omega },
		{ duration: halfS, turnRate: -omega }
	];
}

/** A quarter turn at constant speed: radius R, left when `left`. */
export function quarterTurn(speed: number, radius: number, left: boolean): Manoeuvre {
	return {
		duration: ((Math.PI / 2) * radius) / speed,
		turnRate: ((left ? 1 : -1) * speed) / radius
	};
}

export function chance(rng: Rng, p: number): boolean {
	return rng.next() < p;
}
