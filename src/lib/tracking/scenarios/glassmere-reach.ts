import type { Rng } from '../../random';
import { chance, entryFree, laneChange, moving } from './helpers';
import type { ObjectSpec, Scenario, SpawnSource, WorldObjectView } from './types';

/** Lane centres (y, metres) of the eastbound carriageway; the on-ramp runs alongside the slow lane. */
const RAMP = -3.6;
const SLOW = 0;
const MIDDLE = 3.6;
const FAST = 7.2;
const EGO_SPEED = 24;
const RANGE = 120;
const HALF_ANGLE = (50 * Math.PI) / 180;
/** Arrivals ahead appear just beyond the radar's reach, so they enter it at the far edge. */
const AHEAD = RANGE + 10;

function cruiser(
	rng: Rng,
	egoX: number,
	live: readonly WorldObjectView[],
	laneY: number,
	lo: number,
	hi: number,
	truckShare: number
): ObjectSpec | null {
	const x = egoX + AHEAD;
	const speed = rng.uniform(lo, hi);
	const kind = chance(rng, truckShare) ? 'truck' : 'car';
	if (!entryFree(live, x, laneY, 30)) return null;
	return { kind, x: moving(x, laneY, 0, speed), plan: [], accelSd: 0.05 };
}

const spawns: SpawnSource[] = [
	{
		label: 'slow lane ahead',
		rate: 1 / 7,
		make: (rng, _t, ego, live) => cruiser(rng, ego.x, live, SLOW, 17, 20, 0.4)
	},
	{
		label: 'fast lane ahead',
		rate: 1 / 12,
		make: (rng, _t, ego, live) => cruiser(rng, ego.x, live, FAST, 21, 23, 0)
	},
	{
		label: 'on-ramp merge',
		rate: 1 / 15,
		make(rng, _t, ego, live) {
			const x = ego.x + AHEAD;
			const speed = rng.uniform(16, 19);
			const wait = rng.uniform(3, 8);
			if (!entryFree(live, x, RAMP, 30)) return null;
			return {
				kind: 'car',
				x: moving(x, RAMP, 0, speed),
				plan: [{ duration: wait }, ...laneChange(speed, SLOW - RAMP, 2)],
				accelSd: 0.05
			};
		}
	},
	{
		label: 'overtaker',
		rate: 1 / 25,
		make(rng, _t, ego, live) {
			const x = ego.x - 50;
			const speed = rng.uniform(29, 32);
			const cutIn = chance(rng, 0.5);
			if (!entryFree(live, x, FAST, 30)) return null;
			// Pass the ego, then (half of them) cut into its lane about 25 m ahead of it.
			const plan = cutIn
				? [{ duration: 75 / (speed - EGO_SPEED) }, ...laneChange(speed, MIDDLE - FAST, 1.5)]
				: [];
			return { kind: 'car', x: moving(x, FAST, 0, speed), plan, accelSd: 0.05 };
		}
	}
];

export const glassmereReach: Scenario = {
	name: 'glassmere-reach',
	title: 'Glassmere Reach',
	place: 'Glassmere Reach, eastbound carriageway past the Tallowfen on-ramp',
	description:
		'Three lanes eastbound at 24 m/s behind a forward radar. Slower lorries and cars are caught up and passed, on-ramp traffic merges into the slow lane, and faster cars overtake on the left, some cutting in ahead of the ego.',
	dt: 0.05,
	durationS: 180,
	sensor: {
		name: 'kestrel-front',
		range: RANGE,
		minRange: 1,
		halfAngle: HALF_ANGLE,
		pdNear: 0.95,
		pdFar: 0.85,
		noiseSd: 0.5,
		clutterRate: 10
	},
	ego: {
		start: { x: 0, y: MIDDLE, heading: 0 },
		legs: [{ kind: 'straight', length: 1e7, speed: EGO_SPEED }]
	},
	initial(rng) {
		const out: ObjectSpec[] = [];
		for (const [y, lo, hi] of [
			[SLOW, 17, 20],
			[FAST, 21, 23]
		] as const)
			for (const ahead of [AHEAD, AHEAD + 40, AHEAD + 80])
				out.push({
					kind: 'car',
					x: moving(ahead, y, 0, rng.uniform(lo, hi)),
					plan: [],
					accelSd: 0.05
				});
		return out;
	},
	spawns,
	retire: (s, ego) => s[0] < ego.x - 80 || s[0] > ego.x + 250,
	births: [
		{
			label: 'slow lane, far edge',
			frame: 'ego',
			mean: [RANGE - 3, SLOW - MIDDLE, 19, 0],
			sd: [4, 1.5, 4, 1],
			weight: 0.015
		},
		{
			label: 'fast lane, far edge',
			frame: 'ego',
			mean: [RANGE - 3, FAST - MIDDLE, 22, 0],
			sd: [4, 1.5, 4, 1],
			weight: 0.015
		},
		{
			label: 'on-ramp, far edge',
			frame: 'ego',
			mean: [RANGE - 3, RAMP - MIDDLE, 18, 0],
			sd: [4, 1.5, 4, 1],
			weight: 0.015
		},
		{
			label: 'fast lane, overtaking into view',
			frame: 'ego',
			mean: [(FAST - MIDDLE) / Math.tan(HALF_ANGLE) + 2, FAST - MIDDLE, 30, 0],
			sd: [2.5, 1.5, 3, 1],
			weight: 0.015
		}
	],
	incidents: [
		{
			kind: 'occlusion',
			label: 'car hidden behind a lorry',
			fromS: 50,
			toS: 53
		},
		{
			kind: 'clutter-burst',
			label: 'ghost return off the noise barrier',
			fromS: 100,
			toS: 112,
			frame: 'ego',
			centre: [RANGE - 6, RAMP - MIDDLE],
			radius: 1.2,
			perScan: 1.5
		}
	],
	filterProcessNoise: 2
};
