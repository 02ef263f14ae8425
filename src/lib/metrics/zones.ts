/** Zone occupancy: the probability that at least one object lies inside a rectangle. */
import type { EgoPose } from '../protocol/types';
import type { Coords } from '../runs';
import { gaussianRectProbability, type Cov2 } from './bivariate-normal';

export interface Zone {
	name: string;
	/** frame the bounds are given in */
	coords: Coords;
	/** [min, max] along the zone's own x axis, before rotation */
	x: [number, number];
	/** [min, max] along the zone's own y axis, before rotation */
	y: [number, number];
	/** counter-clockwise rotation in radians of the rectangle about its centre; default 0 */
	angle?: number;
}

/** An object's planar position as seen in some frame, with optional covariance and existence. */
export interface PlanarObject {
	mean: [number, number];
	/** (σxx, σxy, σyy); absent means a point */
	cov?: Cov2;
	/** existence probability; absent means 1 */
	r?: number;
}

/** Rotate a planar object by angle θ (counter-clockwise) and then translate it by t. */
function rigid(o: PlanarObject, theta: number, tx: number, ty: number): PlanarObject {
	const c = Math.cos(theta);
	const s = Math.sin(theta);
	const [x, y] = o.mean;
	const out: PlanarObject = { mean: [c * x - s * y + tx, s * x + c * y + ty], r: o.r };
	if (o.cov) {
		// R Σ Rᵀ for R = [[c, −s], [s, c]].
		const [a, b, d] = o.cov;
		out.cov = [
			c * c * a - 2 * c * s * b + s * s * d,
			c * s * (a - d) + (c * c - s * s) * b,
			s * s * a + 2 * c * s * b + c * c * d
		];
	}
	return out;
}

/** Express an object given in `from` coordinates in `to` coordinates; null if the ego pose is needed but absent. */
export function changeCoords(
	o: PlanarObject,
	from: Coords,
	to: Coords,
	ego: EgoPose | undefined
): PlanarObject | null {
	if (from === to) return o;
	if (!ego) return null;
	if (from === 'ego') return rigid(o, ego.heading, ego.x, ego.y);
	const shifted: PlanarObject = { ...o, mean: [o.mean[0] - ego.x, o.mean[1] - ego.y] };
	return rigid(shifted, -ego.heading, 0, 0);
}

/** P(object inside zone), the object given in the zone's coordinates; existence not included. */
export function insideProbability(o: PlanarObject, zone: Zone): number {
	const cx = (zone.x[0] + zone.x[1]) / 2;
	const cy = (zone.y[0] + zone.y[1]) / 2;
	const angle = zone.angle ?? 0;
	// Into the rectangle's own axes: undo the rotation about its centre.
	const local =
		angle === 0 ? o : rigid({ ...o, mean: [o.mean[0] - cx, o.mean[1] - cy] }, -angle, cx, cy);
	const rect = { xMin: zone.x[0], xMax: zone.x[1], yMin: zone.y[0], yMax: zone.y[1] };
	const [x, y] = local.mean;
	const pointInside = x >= rect.xMin && x <= rect.xMax && y >= rect.yMin && y <= rect.yMax ? 1 : 0;
	if (!local.cov) return pointInside;
	// Far away in one axis, the marginal bounds the answer: P ≤ Φ(−8) ≈ 6e-16, zero in double precision
	// for this purpose, and it spares the bivariate integration for most objects in a frame.
	const [sxx, , syy] = local.cov;
	const far = 8;
	if (sxx > 0 && syy > 0) {
		const sx = Math.sqrt(sxx);
		const sy = Math.sqrt(syy);
		if (
			rect.xMin - x > far * sx ||
			x - rect.xMax > far * sx ||
			rect.yMin - y > far * sy ||
			y - rect.yMax > far * sy
		)
			return 0;
	}
	return gaussianRectProbability(local.mean, local.cov, rect) ?? pointInside;
}

/** 1 − Πᵢ (1 − rᵢ Pᵢ(zone)): objects exist and lie independently of each other. */
export function zoneOccupancy(objects: readonly PlanarObject[], zone: Zone): number {
	let none = 1;
	for (const o of objects) {
		const r = o.r ?? 1;
		if (r <= 0) continue;
		none *= 1 - r * insideProbability(o, zone);
	}
	return 1 - none;
}
