/** Plane geometry for the scene: changing coordinates with the ego pose and covariance ellipses. */
import type { EgoPose } from '$lib/protocol/types';
import type { Coords } from '$lib/runs';

/** x' = c·x − s·y + tx, y' = s·x + c·y + ty; `rot` is the angle added to headings */
export interface Rigid {
	c: number;
	s: number;
	tx: number;
	ty: number;
	rot: number;
}

export const identity: Rigid = { c: 1, s: 0, tx: 0, ty: 0, rot: 0 };

/** From `from` coordinates to `to` coordinates using one ego pose; identity when the pose is needed but absent. */
export function rigidBetween(from: Coords, to: Coords, ego: EgoPose | undefined): Rigid {
	if (from === to || !ego) return identity;
	const c = Math.cos(ego.heading);
	const s = Math.sin(ego.heading);
	if (from === 'ego') return { c, s, tx: ego.x, ty: ego.y, rot: ego.heading };
	// world → ego: R(−h)(p − e)
	return { c, s: -s, tx: -(c * ego.x + s * ego.y), ty: s * ego.x - c * ego.y, rot: -ego.heading };
}

export function compose(second: Rigid, first: Rigid): Rigid {
	return {
		c: second.c * first.c - second.s * first.s,
		s: second.s * first.c + second.c * first.s,
		tx: second.c * first.tx - second.s * first.ty + second.tx,
		ty: second.s * first.tx + second.c * first.ty + second.ty,
		rot: second.rot + first.rot
	};
}

export function apply(r: Rigid, x: number, y: number): [number, number] {
	return [r.c * x - r.s * y + r.tx, r.s * x + r.c * y + r.ty];
}

/** Semi-axes (at `sigma` standard deviations) and angle of the ellipse of a 2×2 covariance [[a, b], [b, d]]. */
export function ellipse(
	a: number,
	b: number,
	d: number,
	sigma: number
): { rx: number; ry: number; angle: number } | null {
	if (!(a >= 0 && d >= 0) || !Number.isFinite(b)) return null;
	const mid = (a + d) / 2;
	const rad = Math.sqrt(((a - d) / 2) ** 2 + b * b);
	const l1 = mid + rad;
	const l2 = Math.max(0, mid - rad);
	return {
		rx: sigma * Math.sqrt(l1),
		ry: sigma * Math.sqrt(l2),
		angle: 0.5 * Math.atan2(2 * b, a - d)
	};
}

/** A scale bar length that reads well: 1, 2 or 5 × 10ⁿ metres, about `targetPx` long. */
export function niceLength(zoom: number, targetPx = 100): number {
	const raw = targetPx / zoom;
	const p = 10 ** Math.floor(Math.log10(raw));
	for (const m of [1, 2, 5, 10]) if (m * p >= raw * 0.7) return m * p;
	return 10 * p;
}
