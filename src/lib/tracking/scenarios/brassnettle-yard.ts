import type { Rng } from '../../random';
import { chance, entryFree, moving, quarterTurn } from './helpers';
import type { BirthRegion, Manoeuvre, ObjectSpec, Scenario, SpawnSource } from './types';

/** The yard spans x ∈ [0, 60], y ∈ [0, 40]; doors on the west wall, the gate on the east side. */
const WIDTH = 60;
const DEPTH = 40;
const BAY_Y = 36;
const BAYS = Array.from({ length: 9 }, (_, i) => 6 + 6 * i);
const DOORS = [10, 30];
const GATE_Y = 18;

function parkedVan(rng: Rng, bayX: number): ObjectSpec {
	const plan: Manoeuvre[] = [];
	if (chance(rng, 0.35)) {
		// Pulls out south, turns east and leaves through the gate.
		plan.push(
			{ duration: rng.uniform(20, 150) },
			{ duration: 2, accel: 1.25 },
			{ duration: 3 },
			quarterTurn(2.5, 5, true)
		);
	}
	return {
		kind: 'van',
		x: [bayX, BAY_Y, 0, 0],
		heading: -Math.PI / 2,
		plan,
		accelSd: 0.05
	};
}

function walker(rng: Rng, doorY: number): ObjectSpec {
	const speed = rng.uniform(0.9, 1.5);
	const heading = rng.uniform(-0.4, 0.4);
	const out = rng.uniform(6, 16);
	const bend = rng.normal(0, 0.08);
	const pause = rng.uniform(3, 12);
	const turnRate = 1.2;
	// Walk in, stop a while, turn round and walk back out the same door.
	const plan: Manoeuvre[] = [
		{ duration: out, turnRate: bend },
		{ duration: 1, accel: -speed },
		{ duration: pause },
		{ duration: 1, accel: speed },
		{ duration: Math.PI / turnRate, turnRate },
		{ duration: out, turnRate: -bend }
	];
	return {
		kind: 'pedestrian',
		x: moving(0.5, doorY, heading, speed),
		plan,
		accelSd: 0.12
	};
}

const spawns: SpawnSource[] = [
	...DOORS.map((doorY): SpawnSource => ({
		label: `door at y=${doorY}`,
		rate: 1 / 12,
		make(rng, _t, _ego, live) {
			const spec = walker(rng, doorY);
			return entryFree(live, 0.5, doorY, 1.5) ? spec : null;
		}
	})),
	{
		label: 'gate',
		rate: 1 / 40,
		make(rng, _t, _ego, live) {
			const dwell = rng.uniform(15, 30);
			if (!entryFree(live, WIDTH + 2, GATE_Y, 10)) return null;
			// Drives in, stops to unload, then turns round to the south and leaves.
			return {
				kind: 'truck',
				x: moving(WIDTH + 2, GATE_Y, Math.PI, 4),
				plan: [
					{ duration: 5 },
					{ duration: 2, accel: -2 },
					{ duration: dwell },
					{ duration: 2, accel: 2 },
					quarterTurn(4, 6, true),
					quarterTurn(4, 6, true)
				],
				accelSd: 0.05
			};
		}
	}
];

const births: BirthRegion[] = [
	...DOORS.map((y): BirthRegion => ({
		label: `door at y=${y}`,
		frame: 'world',
		mean: [1.5, y, 1.2, 0],
		sd: [1.5, 1.5, 0.7, 0.7],
		weight: 0.02
	})),
	{
		label: 'gate',
		frame: 'world',
		mean: [WIDTH - 2, GATE_Y, -4, 0],
		sd: [2.5, 2.5, 1.5, 1.5],
		weight: 0.02
	},
	...BAYS.map((x): BirthRegion => ({
		label: `bay at x=${x}`,
		frame: 'world',
		mean: [x, BAY_Y, 0, 0],
		sd: [1, 1, 0.3, 0.3],
		weight: 0.005
	}))
];

export const brassnettleYard: Scenario = {
	name: 'brassnettle-yard',
	title: 'Brassnettle Yard',
	place: 'Brassnettle Yard, the goods depot behind Cindervane Row',
	description:
		'A depot yard at walking pace. The ego tug loops between the loading bays while staff walk in and out of two doors, vans sit in the bays and now and then pull out, and lorries come in through the gate to unload.',
	dt: 0.05,
	durationS: 180,
	sensor: {
		name: 'lantern-mast',
		range: 65,
		minRange: 0.5,
		halfAngle: Math.PI,
		pdNear: 0.97,
		pdFar: 0.9,
		noiseSd: 0.25,
		clutterRate: 6
	},
	ego: {
		start: { x: 15, y: 12, heading: 0 },
		legs: [
			{ kind: 'straight', length: 30, speed: 2.5 },
			{ kind: 'wait', duration: 8 },
			{ kind: 'arc', radius: 4, angle: Math.PI / 2, speed: 1.5 },
			{ kind: 'straight', length: 8, speed: 2.5 },
			{ kind: 'arc', radius: 4, angle: Math.PI / 2, speed: 1.5 },
			{ kind: 'straight', length: 30, speed: 2.5 },
			{ kind: 'wait', duration: 6 },
			{ kind: 'arc', radius: 4, angle: Math.PI / 2, speed: 1.5 },
			{ kind: 'straight', length: 8, speed: 2.5 },
			{ kind: 'arc', radius: 4, angle: Math.PI / 2, speed: 1.5 }
		]
	},
	initial: (rng) => BAYS.filter(() => chance(rng, 0.6)).map((x) => parkedVan(rng, x)),
	spawns,
	retire: (s) => s[0] < -1 || s[0] > WIDTH + 3 || s[1] < -1 || s[1] > DEPTH + 1,
	births,
	incidents: [
		{
			kind: 'occlusion',
			label: 'walker behind a stack of crates',
			fromS: 40,
			toS: 44
		},
		{
			kind: 'clutter-burst',
			label: 'strip curtain flapping at the north door',
			fromS: 120,
			toS: 135,
			frame: 'world',
			centre: [2, DOORS[1]],
			radius: 0.8,
			perScan: 1.5
		}
	],
	filterProcessNoise: 1.5
};
