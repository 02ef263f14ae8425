/** Brute-force references shared by the metrics tests. */
import { expect } from 'vitest';
import type { GospaResult } from './gospa';
import published from './fixtures/gospa-published-example.json';

/** Minimum assignment cost over all injections of the smaller side into the larger one. */
export function bruteForceAssignmentCost(
	cost: ArrayLike<number>,
	rows: number,
	cols: number
): number {
	const tall = rows > cols;
	const small = tall ? cols : rows;
	const large = tall ? rows : cols;
	const at = (s: number, l: number) => (tall ? cost[l * cols + s] : cost[s * cols + l]);
	const used = new Array<boolean>(large).fill(false);
	let best = Infinity;
	const walk = (s: number, acc: number) => {
		if (s === small) {
			best = Math.min(best, acc);
			return;
		}
		for (let l = 0; l < large; l++) {
			if (used[l]) continue;
			used[l] = true;
			walk(s + 1, acc + at(s, l));
			used[l] = false;
		}
	};
	walk(0, 0);
	return best;
}

/**
 * Checks a GOSPA result for the published example against the GOSPA authors' reference MATLAB
 * implementation output (fixtures/gospa-published-example.json names the source).
 */
export function expectPublishedGospa(r: GospaResult): void {
	const cp = Math.pow(published.c, published.p);
	expect(r.gospa).toBeCloseTo(published.published.d_gospa, 10);
	expect(r.localization).toBeCloseTo(published.published.localisation_cost, 10);
	expect((cp / 2) * r.missed).toBeCloseTo(published.published.missed_cost, 12);
	expect((cp / 2) * r.falseCount).toBeCloseTo(published.published.false_cost, 12);
	expect(Array.from(r.truthToEstimate, (j) => j + 1)).toEqual(
		published.published.x_to_y_assignment_1_based
	);
}
