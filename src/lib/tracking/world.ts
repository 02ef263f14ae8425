import type { EgoPose } from '../protocol/types';
import { addAccelNoise, turnStep, type Vec4 } from './motion';
import type { Rng } from '../random';
import type {
	EgoLeg,
	Manoeuvre,
	ObjectKind,
	ObjectSpec,
	Scenario,
	WorldObjectView
} from './scenarios/types';

/** The ego's pose as a closed-form function of time along a looping list of legs. */
export class EgoTrack {
	readonly #legs: EgoLeg[];
	readonly #starts: EgoPose[] = [];
	readonly #durations: number[] = [];
	readonly #loop: number;
	readonly #lapShift: EgoPose;

	constructor(start: EgoPose, legs: EgoLeg[]) {
		this.#legs = legs;
		let pose = start;
		let total = 0;
		for (const leg of legs) {
			const d = legDuration(leg);
			this.#starts.push(pose);
			this.#durations.push(d);
			pose = advance(pose, leg, d);
			total += d;
		}
		this.#loop = total;
		if (!(total > 0)) throw new Error('EgoTrack: the legs take no time');
		// A loop that does not close would jump; offset later laps by the drift so it stays continuous.
		this.#lapShift = {
			x: pose.x - start.x,
			y: pose.y - start.y,
			heading: pose.heading - start.heading
		};
	}

	get loopDuration(): number {
		return this.#loop;
	}

	at(t: number): EgoPose {
		const lap = Math.floor(t / this.#loop);
		let rem = t - lap * this.#loop;
		for (let i = 0; i < this.#legs.length; i++) {
			const d = this.#durations[i];
			if (rem <= d || i === this.#legs.length - 1) {
				const p = advance(this.#starts[i], this.#legs[i], Math.min(rem, d));
				if (lap === 0) return p;
				return {
					x: p.x + lap * this.#lapShift.x,
					y: p.y + lap * this.#lapShift.y,
					heading: wrapAngle(p.heading + lap * this.#lapShift.heading)
				};
			}
			rem -= d;
		}
		return this.#starts[0];
	}
}

function legDuration(leg: EgoLeg): number {
	if (leg.kind === 'wait') return leg.duration;
	if (leg.kind === 'straight') return leg.length / leg.speed;
	return (Math.abs(leg.angle) * leg.radius) / leg.speed;
}

function advance(p: EgoPose, leg: EgoLeg, t: number): EgoPose {
	if (leg.kind === 'wait') return p;
	if (leg.kind === 'straight') {
		const d = leg.speed * t;
		return {
			x: p.x + d * Math.cos(p.heading),
			y: p.y + d * Math.sin(p.heading),
			heading: p.heading
		};
	}
	const turn = Math.sign(leg.angle);
	const dh = (turn * leg.speed * t) / leg.radius;
	// Centre of the arc lies to the left (turn > 0) or right of the heading.
	const cx = p.x - turn * leg.radius * Math.sin(p.heading);
	const cy = p.y + turn * leg.radius * Math.cos(p.heading);
	const h = p.heading + dh;
	return {
		x: cx + turn * leg.radius * Math.sin(h),
		y: cy - turn * leg.radius * Math.cos(h),
		heading: wrapAngle(h)
	};
}

export function wrapAngle(a: number): number {
	return Math.atan2(Math.sin(a), Math.cos(a));
}

interface LiveObject extends WorldObjectView {
	readonly id: number;
	readonly kind: ObjectKind;
	s: Vec4;
	heading: number;
	plan: Manoeuvre[];
	seg: number;
	segLeft: number;
	accelSd: number;
}

/** Truth objects of a scenario: arrivals, motion with process noise, retirement. */
export class World {
	readonly #scenario: Scenario;
	readonly #rng: Rng;
	readonly #nextArrival: number[];
	#objects: LiveObject[] = [];
	#nextId = 1;
	#t = 0;

	constructor(scenario: Scenario, rng: Rng) {
		this.#scenario = scenario;
		this.#rng = rng;
		for (const spec of scenario.initial(rng)) this.#add(spec);
		this.#nextArrival = scenario.spawns.map((s) =>
			s.rate > 0 ? rng.exponential(s.rate) : Infinity
		);
	}

	get objects(): readonly WorldObjectView[] {
		return this.#objects;
	}

	get time(): number {
		return this.#t;
	}

	#add(spec: ObjectSpec): void {
		const first = spec.plan[0];
		this.#objects.push({
			id: this.#nextId++,
			kind: spec.kind,
			s: [...spec.x],
			heading: spec.heading ?? Math.atan2(spec.x[3], spec.x[2]),
			plan: spec.plan,
			seg: 0,
			segLeft: first ? first.duration : Infinity,
			accelSd: spec.accelSd
		});
	}

	/** Moves every object by dt, then retires leavers and admits arrivals due by the new time. */
	step(dt: number, ego: EgoPose): void {
		for (const o of this.#objects) {
			const man = o.seg < o.plan.length ? o.plan[o.seg] : undefined;
			o.heading = turnStep(o.s, o.heading, dt, man?.turnRate ?? 0, man?.accel ?? 0);
			if (Math.hypot(o.s[2], o.s[3]) > 0.5) addAccelNoise(o.s, dt, o.accelSd, this.#rng);
			o.segLeft -= dt;
			while (o.segLeft <= 1e-9 && o.seg < o.plan.length) {
				o.seg++;
				o.segLeft += o.seg < o.plan.length ? o.plan[o.seg].duration : Infinity;
			}
		}
		this.#t += dt;
		this.#objects = this.#objects.filter((o) => !this.#scenario.retire(o.s, ego));
		const spawns = this.#scenario.spawns;
		for (let i = 0; i < spawns.length; i++) {
			while (this.#nextArrival[i] <= this.#t) {
				const spec = spawns[i].make(this.#rng, this.#t, ego, this.#objects);
				if (spec) this.#add(spec);
				this.#nextArrival[i] += this.#rng.exponential(spawns[i].rate);
			}
		}
	}
}
