import type { Vec4 } from '../motion';
import type { Rng } from '../../random';
import { entryFree, moving, quarterTurn } from './helpers';
import type { BirthRegion, Manoeuvre, Scenario, SpawnSource } from './types';

/** Lane centre offset from the road axis (right-hand traffic). */
const LANE = 1.75;
/** Where arrivals appear, metres from the junction centre along each arm. */
const ARM = 55;
/** Half-size of the junction box in which turns happen. */
const BOX = 8;
const TURN_SPEED = 4;

interface Arm {
	label: string;
	/** heading of traffic driving into the junction */
	heading: number;
	rate: number;
}

const ARMS: Arm[] = [
	// The ego shuttles along the north-south road, so little traffic shares its lanes.
	{ label: 'south arm', heading: Math.PI / 2, rate: 1 / 30 },
	{ label: 'north arm', heading: -Math.PI / 2, rate: 1 / 30 },
	{ label: 'west arm', heading: 0, rate: 1 / 7 },
	{ label: 'east arm', heading: Math.PI, rate: 1 / 7 }
];

/** Entry point of an arm's inbound lane, `back` metres from the centre. */
function inbound(arm: Arm, back: number): [number, number] {
	const dx = Math.cos(arm.heading);
	const dy = Math.sin(arm.heading);
	// The inbound lane lies to the right of the direction of travel.
	return [-back * dx + LANE * dy, -back * dy - LANE * dx];
}

function route(rng: Rng, speed: number): Manoeuvre[] {
	const u = rng.next();
	if (u < 0.5) return [];
	const left = u < 0.78;
	const radius = left ? BOX + LANE : BOX - LANE;
	const brakeS = 2;
	const brakeDist = ((speed + TURN_SPEED) / 2) * brakeS;
	return [
		{ duration: (ARM - BOX - brakeDist) / speed },
		{ duration: brakeS, accel: (TURN_SPEED - speed) / brakeS },
		quarterTurn(TURN_SPEED, radius, left),
		{ duration: 3, accel: (speed - TURN_SPEED) / 3 }
	];
}

const spawns: SpawnSource[] = ARMS.map((arm) => ({
	label: arm.label,
	rate: arm.rate,
	make(rng, _t, ego, live) {
		const [x, y] = inbound(arm, ARM);
		const speed = rng.uniform(7, 11);
		const plan = route(rng, speed);
		const kind = rng.next() < 0.2 ? 'van' : 'car';
		if (!entryFree(live, x, y, 14, ego)) return null;
		return { kind, x: moving(x, y, arm.heading, speed), plan, accelSd: 0.08 };
	}
}));

const births: BirthRegion[] = ARMS.map((arm) => {
	const [x, y] = inbound(arm, ARM - 3);
	const mean: Vec4 = [x, y, 9 * Math.cos(arm.heading), 9 * Math.sin(arm.heading)];
	return {
		label: arm.label,
		frame: 'world',
		mean,
		sd: [3, 3, 3, 3],
		weight: 0.02
	};
});

export const lanternfallCrossing: Scenario = {
	name: 'lanternfall-crossing',
	title: 'Lanternfall Crossing',
	place: 'Lanternfall, Orrery Street at Quillmarsh Lane',
	description:
		'A four-way junction without signals. The ego shuttles north and south through it, waiting at the stop line, while cars and vans arrive on all four arms and turn left across its path.',
	dt: 0.05,
	durationS: 180,
	sensor: {
		name: 'roof-halo',
		range: 100,
		minRange: 0.5,
		halfAngle: Math.PI,
		pdNear: 0.98,
		pdFar: 0.9,
		noiseSd: 0.3,
		clutterRate: 8
	},
	ego: {
		start: { x: LANE, y: -40, heading: Math.PI / 2 },
		legs: [
			{ kind: 'straight', length: 25, speed: 6 },
			{ kind: 'wait', duration: 12 },
			{ kind: 'straight', length: 55, speed: 6 },
			{ kind: 'arc', radius: LANE, angle: Math.PI, speed: 2 },
			{ kind: 'straight', length: 25, speed: 6 },
			{ kind: 'wait', duration: 10 },
			{ kind: 'straight', length: 55, speed: 6 },
			{ kind: 'arc', radius: LANE, angle: Math.PI, speed: 2 }
		]
	},
	initial: () => [],
	spawns,
	retire: (s) => Math.abs(s[0]) > ARM + 3 || Math.abs(s[1]) > ARM + 3,
	births,
	incidents: [
		{
			kind: 'occlusion',
			label: 'car hidden behind a delivery van',
			fromS: 62,
			toS: 65
		},
		{
			kind: 'clutter-burst',
			label: 'reflective hoarding at the south kerb',
			fromS: 140,
			toS: 155,
			frame: 'world',
			centre: inbound(ARMS[0], ARM - 4),
			radius: 1,
			perScan: 1.5
		}
	],
	filterProcessNoise: 4
};
