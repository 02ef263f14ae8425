import type { Estimate, Frame, Measurement, TruthObject } from '../protocol/types';
import { GmPhdFilter, type BirthComponent, type MixtureComponent } from './gmphd';
import { deriveSeed, Rng } from '../random';
import { getScenario } from './scenarios';
import type { BirthRegion, Incident, Scenario } from './scenarios/types';
import { SensorView } from './sensor';
import { EgoTrack, World } from './world';

export const STATE_FIELDS = ['x', 'y', 'vx', 'vy'] as const;
export const MEASUREMENT_FIELDS = ['x', 'y'] as const;

export interface SimulateOptions {
	seed: number;
	/** shorter or longer than the scenario's own duration */
	durationS?: number;
	/** mean clutter returns per scan; the filter is told the same rate */
	clutterRate?: number;
	/** scripted occlusion and clutter bursts (default true) */
	incidents?: boolean;
	/** t of frame 0, seconds since the Unix epoch (default 0) */
	startEpoch?: number;
	/** attach the filter's full Gaussian mixture to every step */
	withMixture?: boolean;
}

export interface SimStep {
	index: number;
	/** protocol-shaped: seq from 0, t from startEpoch */
	frame: Frame;
	/** Σ of the mixture weights after the update */
	expectedCardinality: number;
	mixture?: MixtureComponent[];
	/** labels of the scripted incidents in force in this frame */
	activeIncidents: string[];
}

export function frameCount(
	scenario: Scenario,
	opts: Pick<SimulateOptions, 'durationS'> = {}
): number {
	return Math.round((opts.durationS ?? scenario.durationS) / scenario.dt);
}

/** The scenario's birth regions placed for one ego pose, as filter birth components. */
export function birthComponents(
	regions: readonly BirthRegion[],
	view: SensorView
): BirthComponent[] {
	return regions.map((b) => {
		const [sx, sy, svx, svy] = b.sd;
		const P = new Float64Array(16);
		if (b.frame === 'world') {
			const m = b.mean;
			[sx, sy, svx, svy].forEach((s, i) => (P[i * 5] = s * s));
			return { w: b.weight, m, P };
		}
		const [x, y] = view.toWorld(b.mean[0], b.mean[1]);
		const [vx, vy] = view.rotateToWorld(b.mean[2], b.mean[3]);
		const c = Math.cos(view.ego.heading);
		const s = Math.sin(view.ego.heading);
		// Diagonal in ego axes, rotated into world axes: R·diag·Rᵀ for each 2×2 block.
		for (const [o, a, bb] of [
			[0, sx, sy],
			[2, svx, svy]
		]) {
			const a2 = a * a;
			const b2 = bb * bb;
			P[o * 4 + o] = c * c * a2 + s * s * b2;
			P[o * 4 + o + 1] = c * s * (a2 - b2);
			P[(o + 1) * 4 + o] = c * s * (a2 - b2);
			P[(o + 1) * 4 + o + 1] = s * s * a2 + c * c * b2;
		}
		return { w: b.weight, m: [x, y, vx, vy], P };
	});
}

export function createFilter(scenario: Scenario): GmPhdFilter {
	const r = scenario.sensor.noiseSd ** 2;
	return new GmPhdFilter({
		dt: scenario.dt,
		processNoise: scenario.filterProcessNoise,
		R: [r, 0, 0, r]
	});
}

const round3 = (v: number): number => Math.round(v * 1000) / 1000;

function active(incident: Incident, t: number): boolean {
	return t >= incident.fromS && t < incident.toS;
}

/**
 * Runs a scenario frame by frame: truth, sensor and a GM-PHD filter. Deterministic per seed; truth
 * and sensor noise draw from separate streams, so the clutter rate does not change the truth.
 */
export function* simulate(name: string, opts: SimulateOptions): Generator<SimStep> {
	const scenario = getScenario(name);
	const { dt, sensor } = scenario;
	const n = frameCount(scenario, opts);
	const clutterRate = opts.clutterRate ?? sensor.clutterRate;
	const incidents = opts.incidents === false ? [] : scenario.incidents;
	const startEpoch = opts.startEpoch ?? 0;
	const truthRng = new Rng(deriveSeed(opts.seed, 'truth'));
	const sensorRng = new Rng(deriveSeed(opts.seed, 'sensor'));
	const track = new EgoTrack(scenario.ego.start, scenario.ego.legs);
	const world = new World(scenario, truthRng);
	const filter = createFilter(scenario);
	const occluded = new Map<Incident, number | null>();

	for (let k = 0; k < n; k++) {
		const t = k * dt;
		const ego = track.at(t);
		if (k > 0) world.step(dt, ego);
		const view = new SensorView(sensor, ego);
		const inView = world.objects.filter((o) => view.contains(o.s[0], o.s[1]));

		const now = incidents.filter((i) => active(i, t));
		const hidden = new Set<number>();
		for (const inc of now) {
			if (inc.kind !== 'occlusion') continue;
			if (!occluded.has(inc)) {
				const movers = inView.filter((o) => Math.hypot(o.s[2], o.s[3]) > 0.5);
				movers.sort(
					(a, b) =>
						Math.hypot(a.s[0] - ego.x, a.s[1] - ego.y) - Math.hypot(b.s[0] - ego.x, b.s[1] - ego.y)
				);
				occluded.set(inc, movers.length > 0 ? movers[0].id : null);
			}
			const id = occluded.get(inc);
			if (id != null) hidden.add(id);
		}

		const points: [number, number][] = [];
		for (const o of inView) {
			const detected = sensorRng.next() < view.pd(o.s[0], o.s[1]);
			const nx = sensorRng.normal(0, sensor.noiseSd);
			const ny = sensorRng.normal(0, sensor.noiseSd);
			if (detected && !hidden.has(o.id)) points.push([o.s[0] + nx, o.s[1] + ny]);
		}
		const nClutter = sensorRng.poisson(clutterRate);
		for (let i = 0; i < nClutter; i++) points.push(view.samplePoint(sensorRng));
		for (const inc of now) {
			if (inc.kind !== 'clutter-burst') continue;
			const [cx, cy] =
				inc.frame === 'ego' ? view.toWorld(inc.centre[0], inc.centre[1]) : inc.centre;
			const count = sensorRng.poisson(inc.perScan);
			for (let i = 0; i < count; i++) {
				const r = inc.radius * Math.sqrt(sensorRng.next());
				const a = 2 * Math.PI * sensorRng.next();
				points.push([cx + r * Math.cos(a), cy + r * Math.sin(a)]);
			}
		}
		// A real sensor does not list its true detections first.
		for (let i = points.length - 1; i > 0; i--) {
			const j = sensorRng.int(i + 1);
			[points[i], points[j]] = [points[j], points[i]];
		}
		const Z = points.map(([x, y]) => [round3(x), round3(y)]);

		filter.predict(birthComponents(scenario.births, view), (m) =>
			view.contains(m[0], m[1]) ? filter.ps : 0
		);
		filter.update(
			Z,
			(m) => view.pd(m[0], m[1]),
			(z) => view.clutterIntensity(z[0], z[1], clutterRate)
		);

		const measurements: Measurement[] = Z.map((z) => ({
			z,
			sensor: sensor.name
		}));
		const estimates: Estimate[] = filter.estimates();
		const truth: TruthObject[] = inView.map((o) => ({
			id: o.id,
			x: o.s.map(round3)
		}));
		yield {
			index: k,
			frame: {
				seq: k,
				t: startEpoch + round3(t),
				ego: {
					x: round3(ego.x),
					y: round3(ego.y),
					heading: Math.round(ego.heading * 1e6) / 1e6
				},
				measurements,
				estimates,
				truth
			},
			expectedCardinality: filter.expectedCardinality,
			mixture: opts.withMixture ? filter.mixture() : undefined,
			activeIncidents: now.map((i) => i.label)
		};
	}
}

/** Regenerates from frame 0 and yields from `startIndex` on: the way to resume a run. */
export function* simulateFrom(
	name: string,
	opts: SimulateOptions,
	startIndex: number
): Generator<SimStep> {
	for (const step of simulate(name, opts)) if (step.index >= startIndex) yield step;
}

/** One frame, regenerated from scratch. */
export function frameAt(name: string, opts: SimulateOptions, index: number): SimStep {
	for (const step of simulateFrom(name, opts, index)) return step;
	throw new RangeError(`frame ${index} is past the end of the run`);
}
