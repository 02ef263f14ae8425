import type { EgoPose } from '../protocol/types';
import type { Rng } from '../random';

/** A range/bearing field of view fixed to the ego, reporting positions in world coordinates. */
export interface SensorSpec {
	/** invented sensor name, sent as Measurement.sensor */
	name: string;
	/** metres */
	range: number;
	/** metres; nothing closer is reported (the ego's own body) */
	minRange: number;
	/** radians either side of the ego heading; π means all round */
	halfAngle: number;
	/** detection probability at the ego and at full range, interpolated in (r / range)² */
	pdNear: number;
	pdFar: number;
	/** standard deviation of the position noise on x and y, metres */
	noiseSd: number;
	/** mean number of clutter returns per scan, uniform over the field of view */
	clutterRate: number;
}

/** The sensor as placed at one ego pose: the geometry both the simulator and the filter use. */
export class SensorView {
	readonly spec: SensorSpec;
	readonly ego: EgoPose;
	readonly area: number;
	readonly #cos: number;
	readonly #sin: number;

	constructor(spec: SensorSpec, ego: EgoPose) {
		this.spec = spec;
		this.ego = ego;
		this.area = fovArea(spec);
		this.#cos = Math.cos(ego.heading);
		this.#sin = Math.sin(ego.heading);
	}

	/** World → ego frame (x forward, y left). */
	toEgo(x: number, y: number): [number, number] {
		const dx = x - this.ego.x;
		const dy = y - this.ego.y;
		return [this.#cos * dx + this.#sin * dy, -this.#sin * dx + this.#cos * dy];
	}

	toWorld(fx: number, fy: number): [number, number] {
		return [
			this.ego.x + this.#cos * fx - this.#sin * fy,
			this.ego.y + this.#sin * fx + this.#cos * fy
		];
	}

	/** Rotates a vector given in ego axes into world axes. */
	rotateToWorld(vx: number, vy: number): [number, number] {
		return [this.#cos * vx - this.#sin * vy, this.#sin * vx + this.#cos * vy];
	}

	contains(x: number, y: number): boolean {
		const [fx, fy] = this.toEgo(x, y);
		const r = Math.hypot(fx, fy);
		if (r > this.spec.range || r < this.spec.minRange) return false;
		return this.spec.halfAngle >= Math.PI || Math.abs(Math.atan2(fy, fx)) <= this.spec.halfAngle;
	}

	/** Detection probability at a world position; zero outside the field of view. */
	pd(x: number, y: number): number {
		if (!this.contains(x, y)) return 0;
		const u = Math.hypot(x - this.ego.x, y - this.ego.y) / this.spec.range;
		return this.spec.pdNear + (this.spec.pdFar - this.spec.pdNear) * u * u;
	}

	/** Clutter intensity κ(z) per square metre for a given clutter rate. */
	clutterIntensity(x: number, y: number, rate = this.spec.clutterRate): number {
		return this.contains(x, y) ? rate / this.area : 0;
	}

	/** A point uniform over the field of view, in world coordinates. */
	samplePoint(rng: Rng): [number, number] {
		const { range, minRange, halfAngle } = this.spec;
		const r = Math.sqrt(rng.uniform(minRange * minRange, range * range));
		const b = rng.uniform(-Math.min(halfAngle, Math.PI), Math.min(halfAngle, Math.PI));
		return this.toWorld(r * Math.cos(b), r * Math.sin(b));
	}
}

export function fovArea(spec: SensorSpec): number {
	const half = Math.min(spec.halfAngle, Math.PI);
	return half * (spec.range * spec.range - spec.minRange * spec.minRange);
}
