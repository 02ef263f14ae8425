/** Brute-force references shared by the metrics tests. */

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
