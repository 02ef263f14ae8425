/** Helpers shared by the metrics tests: a seeded PRNG and brute-force references. */

/** mulberry32: a small seeded PRNG so randomised tests are reproducible. */
export function seededRandom(seed: number): () => number {
	let a = seed >>> 0;
	return () => {
		a = (a + 0x6d2b79f5) >>> 0;
		let t = a;
		t = Math.imul(t ^ (t >>> 15), t | 1);
		t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
		return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
	};
}

/** Standard normal draws by Box–Muller from a uniform source. */
export function normalSource(uniform: () => number): () => number {
	return () => {
		const u = 1 - uniform();
		const v = uniform();
		return Math.sqrt(-2 * Math.log(u)) * Math.cos(2 * Math.PI * v);
	};
}

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
