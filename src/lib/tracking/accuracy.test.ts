import { describe, expect, it } from 'vitest';
import { SCENARIOS } from './scenarios';
import { simulate } from './simulate';
import {
	accumulate,
	bruteForceGospa,
	clusteredGospa,
	emptyAgreement
} from './testing/simple-set-error';

describe('reference GOSPA by enumeration', () => {
	it('gives hand-computed values', () => {
		// one pair 5 m apart (3-4-5 triangle) inside c = 10: cost 5 (by hand)
		expect(bruteForceGospa([[0, 0]], [[3, 4]], 10)).toBeCloseTo(5, 12);
		// nothing estimated: c/2 per missed object (GOSPA with α = 2, p = 1)
		expect(
			bruteForceGospa(
				[
					[0, 0],
					[9, 9]
				],
				[],
				4
			)
		).toBe(4);
		// the far estimate is cheaper left unassigned: 1 + 2·(c/2) = 5 rather than assigned at 20 m
		expect(
			bruteForceGospa(
				[
					[0, 0],
					[0, 20]
				],
				[
					[1, 0],
					[0, 40]
				],
				4
			)
		).toBeCloseTo(1 + 4, 12);
		// the crossing assignment is worse: 1 + 1 beats 9 + 9 (by hand)
		expect(
			bruteForceGospa(
				[
					[0, 0],
					[10, 0]
				],
				[
					[9, 0],
					[1, 0]
				],
				20
			)
		).toBeCloseTo(2, 12);
	});

	it('splitting into groups closer than c changes nothing', () => {
		const xs = [
			[0, 0],
			[3, 0],
			[30, 0],
			[31, 1],
			[60, 0]
		];
		const ys = [
			[1, 0],
			[2.5, 0.5],
			[30.5, 0.2],
			[90, 0]
		];
		expect(clusteredGospa(xs, ys, 5)).toBeCloseTo(bruteForceGospa(xs, ys, 5), 12);
	});
});

describe('GM-PHD on long seeded runs (no scripted incidents)', () => {
	const GATE = 3;
	const C = 5;

	for (const s of SCENARIOS)
		for (const seed of [1, 2])
			it(`${s.name}, seed ${seed}: cardinality and position follow the truth`, () => {
				const acc = emptyAgreement();
				let cardErr = 0;
				let trueCount = 0;
				let gospaSum = 0;
				for (const step of simulate(s.name, { seed, incidents: false })) {
					const truth = step.frame.truth ?? [];
					const est = step.frame.estimates ?? [];
					cardErr += Math.abs(step.expectedCardinality - truth.length);
					trueCount += truth.length;
					accumulate(acc, step.frame, GATE);
					gospaSum += clusteredGospa(
						truth.map((t) => t.x),
						est.map((e) => e.x),
						C
					);
				}
				const n = acc.frames;
				const meanCount = trueCount / n;
				const missRate = 1 - s.sensor.pdFar;
				const birthMass = s.births.reduce((a, b) => a + b.weight, 0);

				// After a missed detection an object's weight falls to p_S·(1 − p_D) (Vo & Ma 2006, missed-
				// detection term), an absolute error near 1 with probability ≤ 1 − p_D(far) per object and frame.
				// Births add their mass every frame; 0.25 covers entry latency and exits (common practice margin).
				const cardBound = meanCount * missRate + birthMass + 0.25;
				expect(cardErr / n, `mean |Σw − |X||, bound ${cardBound.toFixed(2)}`).toBeLessThan(
					cardBound
				);

				// An object lacks an estimate mostly in the scan after a missed detection (≤ 1 − p_D(far)),
				// so coverage should be near p_D(far); 0.05 below it allows for confirmation latency.
				expect(acc.covered / acc.truthFrames, 'coverage').toBeGreaterThan(1 - missRate - 0.05);

				// Raw position measurements miss by σ·√(π/2) on average (mean of a Rayleigh distribution);
				// a working Kalman update must do better than the measurements it averages.
				const rayleighMean = s.sensor.noiseSd * Math.sqrt(Math.PI / 2);
				expect(acc.matchedDistanceSum / acc.covered, 'mean matched distance').toBeLessThan(
					rayleighMean
				);

				// Clutter that the filter confirms as objects (common practice target: well under 0.1 per frame).
				expect(acc.falseEstimates / n, 'false estimates per frame').toBeLessThan(0.1);

				// GOSPA (c = 5 m, p = 1, α = 2) per frame: c/2 for each missed or false object plus localisation.
				// Bound: misses as above, 0.1 false per frame, and localisation at the measurement error.
				const gospaBound = (C / 2) * (meanCount * missRate + 0.1) + meanCount * rayleighMean;
				expect(gospaSum / n, `mean GOSPA, bound ${gospaBound.toFixed(2)}`).toBeLessThan(gospaBound);
			});
});
