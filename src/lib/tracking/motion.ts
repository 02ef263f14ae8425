import { fromRows, type Mat } from './linalg';
import type { Rng } from '../random';

/** State layout everywhere in this folder: [x, y, vx, vy], metres and metres per second. */
export type Vec4 = [number, number, number, number];

/** Constant-velocity transition for the state [x, y, vx, vy] over dt seconds. */
export function cvTransition(dt: number): Mat {
	return fromRows([
		[1, 0, dt, 0],
		[0, 1, 0, dt],
		[0, 0, 1, 0],
		[0, 0, 0, 1]
	]);
}

/**
 * Process noise of the continuous white-noise-acceleration model, spectral density q (m²/s³) per
 * axis: the covariance of the accumulated effect of random acceleration over dt.
 */
export function cvProcessNoise(dt: number, q: number): Mat {
	const a = (q * dt ** 3) / 3;
	const b = (q * dt ** 2) / 2;
	const c = q * dt;
	return fromRows([
		[a, 0, b, 0],
		[0, a, 0, b],
		[b, 0, c, 0],
		[0, b, 0, c]
	]);
}

/**
 * One step of coordinated-turn motion (turn rate ω rad/s, ω = 0 is constant velocity) with a
 * tangential acceleration, in place. Exact for constant speed; the speed change is applied after
 * the turn, which at 20 Hz is far below the measurement noise.
 */
export function turnStep(
	s: Vec4,
	heading: number,
	dt: number,
	omega: number,
	accel: number
): number {
	const [x, y, vx, vy] = s;
	const speed = Math.hypot(vx, vy);
	let h = speed > 0.2 ? Math.atan2(vy, vx) : heading;
	if (Math.abs(omega) > 1e-9) {
		const sw = Math.sin(omega * dt);
		const cw = Math.cos(omega * dt);
		s[0] = x + (sw * vx - (1 - cw) * vy) / omega;
		s[1] = y + ((1 - cw) * vx + sw * vy) / omega;
		s[2] = cw * vx - sw * vy;
		s[3] = sw * vx + cw * vy;
		h += omega * dt;
	} else {
		s[0] = x + vx * dt;
		s[1] = y + vy * dt;
	}
	if (accel !== 0) {
		const v1 = Math.max(0, speed + accel * dt);
		const dist = 0.5 * (v1 - speed) * dt;
		s[0] += dist * Math.cos(h);
		s[1] += dist * Math.sin(h);
		s[2] = v1 * Math.cos(h);
		s[3] = v1 * Math.sin(h);
	}
	return h;
}

/**
 * Adds one draw of white-noise acceleration (standard deviation accelSd, m/s² per √s) to the state,
 * with the exact position/velocity correlation of the CV model.
 */
export function addAccelNoise(s: Vec4, dt: number, accelSd: number, rng: Rng): void {
	if (accelSd <= 0) return;
	const l11 = Math.sqrt(dt);
	const l21 = dt ** 1.5 / 2;
	const l22 = Math.sqrt(dt ** 3 / 12);
	for (let axis = 0; axis < 2; axis++) {
		const n1 = rng.normal();
		const n2 = rng.normal();
		s[2 + axis] += accelSd * l11 * n1;
		s[axis] += accelSd * (l21 * n1 + l22 * n2);
	}
}
