import type { EgoPose } from '../../protocol/types';
import type { Coords } from '../../runs';
import type { Vec4 } from '../motion';
import type { Rng } from '../../random';
import type { SensorSpec } from '../sensor';

/** One stretch of an object's plan: turn rate (rad/s, + is left) and tangential acceleration. */
export interface Manoeuvre {
	duration: number;
	turnRate?: number;
	accel?: number;
}

export type ObjectKind = 'car' | 'van' | 'truck' | 'cyclist' | 'pedestrian';

export interface ObjectSpec {
	kind: ObjectKind;
	/** [x, y, vx, vy] in world coordinates */
	x: Vec4;
	/** heading when starting at rest, radians */
	heading?: number;
	/** after the plan runs out the object keeps its velocity until the scenario retires it */
	plan: Manoeuvre[];
	/** white-noise acceleration, m/s² per √s; applied only while the object moves */
	accelSd: number;
}

/** A read-only view of a live object that spawn rules may inspect (to keep lanes free). */
export interface WorldObjectView {
	readonly id: number;
	readonly kind: ObjectKind;
	readonly s: Readonly<Vec4>;
}

export interface SpawnSource {
	label: string;
	/** Poisson arrivals per second */
	rate: number;
	/** returns null to skip this arrival (e.g. the entry is occupied) */
	make(rng: Rng, t: number, ego: EgoPose, live: readonly WorldObjectView[]): ObjectSpec | null;
}

/** Ego motion as a loop of legs; positive angles turn left. */
export type EgoLeg =
	| { kind: 'straight'; length: number; speed: number }
	| { kind: 'arc'; radius: number; angle: number; speed: number }
	| { kind: 'wait'; duration: number };

/**
 * Where objects enter the surveillance area, as a Gaussian in [x, y, vx, vy].
 * In frame 'ego' the position is ego-relative (x forward, y left) and the velocity is over ground,
 * expressed in ego axes; in frame 'world' both are world coordinates.
 */
export interface BirthRegion {
	label: string;
	frame: Coords;
	mean: Vec4;
	sd: Vec4;
	weight: number;
}

export type Incident =
	| {
			kind: 'occlusion';
			label: string;
			fromS: number;
			toS: number;
	  }
	| {
			kind: 'clutter-burst';
			label: string;
			fromS: number;
			toS: number;
			frame: Coords;
			centre: [number, number];
			radius: number;
			/** mean returns per scan inside the disc */
			perScan: number;
	  };

export interface Scenario {
	/** slug used by simulate() */
	name: string;
	title: string;
	/** invented place */
	place: string;
	description: string;
	/** seconds per frame */
	dt: number;
	durationS: number;
	sensor: SensorSpec;
	ego: { start: EgoPose; legs: EgoLeg[] };
	/** objects present at t = 0 */
	initial(rng: Rng): ObjectSpec[];
	spawns: SpawnSource[];
	/** true when an object has left the scenario for good */
	retire(s: Readonly<Vec4>, ego: EgoPose): boolean;
	births: BirthRegion[];
	incidents: Incident[];
	/** process noise the filter assumes, m²/s³ */
	filterProcessNoise: number;
}

export type ScenarioInfo = Pick<
	Scenario,
	'name' | 'title' | 'place' | 'description' | 'dt' | 'durationS'
> & {
	sensor: string;
	incidents: Pick<Incident, 'kind' | 'label' | 'fromS' | 'toS'>[];
};
