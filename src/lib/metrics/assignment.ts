/**
 * Optimal linear assignment for rectangular cost matrices by shortest augmenting paths
 * (Jonker–Volgenant style, as formulated for rectangular problems by D. F. Crouse,
 * "On implementing 2D rectangular assignment algorithms", IEEE TAES 2016). O(n³).
 */

export interface Assignment {
	/** column assigned to each row, or -1 */
	rowToCol: Int32Array;
	/** row assigned to each column, or -1 */
	colToRow: Int32Array;
	/** sum of the assigned costs */
	cost: number;
}

export class InfeasibleAssignmentError extends Error {
	constructor() {
		super('assignment infeasible: some row or column can only be matched at infinite cost');
		this.name = 'InfeasibleAssignmentError';
	}
}

/**
 * Minimum-cost assignment of min(rows, cols) pairs, each row and column used at most once.
 * `cost` is row-major (`cost[i * cols + j]`); `+Infinity` forbids a pair, NaN is rejected.
 */
export function solveAssignment(cost: ArrayLike<number>, rows: number, cols: number): Assignment {
	if (!Number.isInteger(rows) || !Number.isInteger(cols) || rows < 0 || cols < 0) {
		throw new RangeError(`bad matrix size ${rows}×${cols}`);
	}
	if (cost.length < rows * cols) throw new RangeError('cost matrix shorter than rows × cols');
	const rowToCol = new Int32Array(rows).fill(-1);
	const colToRow = new Int32Array(cols).fill(-1);
	if (rows === 0 || cols === 0) return { rowToCol, colToRow, cost: 0 };

	// The solver wants rows ≤ cols; a tall matrix is solved transposed.
	const transposed = rows > cols;
	const nr = transposed ? cols : rows;
	const nc = transposed ? rows : cols;
	let c: Float64Array;
	if (transposed) {
		c = new Float64Array(nr * nc);
		for (let i = 0; i < rows; i++) {
			for (let j = 0; j < cols; j++) c[j * rows + i] = cost[i * cols + j];
		}
	} else if (cost instanceof Float64Array) {
		c = cost.length === nr * nc ? cost : cost.subarray(0, nr * nc);
	} else {
		c = Float64Array.from({ length: nr * nc }, (_, k) => cost[k]);
	}
	let max = -Infinity;
	let bad = false;
	for (let k = 0; k < c.length; k++) {
		const x = c[k];
		// NaN fails every comparison, so only an explicit check catches it.
		if (x !== x || x === -Infinity) bad = true;
		if (x > max) max = x;
	}
	if (bad) throw new RangeError('cost matrix holds NaN or -Infinity');
	// How much of the matrix sits at its maximum, judged on the first rows (a sample keeps this
	// pass cheap; cut-off matrices are uniform in this respect).
	const sampleRows = Math.min(nr, 8);
	let atMax = 0;
	for (let k = 0; k < sampleRows * nc; k++) if (c[k] === max) atMax++;
	const plateau = atMax > (sampleRows * nc) / 4;

	const col4row = new Int32Array(nr);
	const row4col = new Int32Array(nc);
	// Column reduction suits dense costs, but on a cut-off matrix (most entries equal to the
	// cut-off, as GOSPA builds) it prices every far column at the plateau and the augmenting
	// paths then wander across it; row reduction, as in solveWide, avoids that (measured faster).
	if (nr === nc && !plateau) solveSquare(c, nr, col4row, row4col);
	else solveWide(c, nr, nc, col4row, row4col);

	let total = 0;
	for (let i = 0; i < nr; i++) {
		const j = col4row[i];
		total += c[i * nc + j];
		if (transposed) {
			rowToCol[j] = i;
			colToRow[i] = j;
		} else {
			rowToCol[i] = j;
			colToRow[j] = i;
		}
	}
	return { rowToCol, colToRow, cost: total };
}

/**
 * Square problems: column reduction, reduction transfer and augmenting row reduction first
 * (R. Jonker, A. Volgenant, "A shortest augmenting path algorithm for dense and sparse linear
 * assignment problems", Computing 38, 1987), which leave only a few rows for the Dijkstra phase.
 */
function solveSquare(c: Float64Array, n: number, rowsol: Int32Array, colsol: Int32Array): void {
	rowsol.fill(-1);
	colsol.fill(-1);
	const v = new Float64Array(n);
	const matches = new Int32Array(n);
	const free = new Int32Array(n);

	// Column minima gathered row by row, which follows the memory layout.
	const colMin = new Float64Array(n).fill(Infinity);
	const colArg = new Int32Array(n);
	for (let i = 0; i < n; i++) {
		const base = i * n;
		for (let j = 0; j < n; j++) {
			const x = c[base + j];
			if (x < colMin[j]) {
				colMin[j] = x;
				colArg[j] = i;
			}
		}
	}
	for (let j = n - 1; j >= 0; j--) {
		const min = colMin[j];
		let imin = colArg[j];
		if (min === Infinity) throw new InfeasibleAssignmentError();
		// Cut-off cost matrices have whole plateaus of equal minima: a tied row that is still
		// unmatched takes the column, which leaves far fewer rows to augment later.
		if (matches[imin] > 0) {
			for (let i = imin + 1; i < n; i++) {
				if (matches[i] === 0 && c[i * n + j] === min) {
					imin = i;
					break;
				}
			}
		}
		v[j] = min;
		if (++matches[imin] === 1) {
			rowsol[imin] = j;
			colsol[j] = imin;
		} else if (v[j] < v[rowsol[imin]]) {
			const j1 = rowsol[imin];
			rowsol[imin] = j;
			colsol[j] = imin;
			colsol[j1] = -1;
		} else {
			colsol[j] = -1;
		}
	}

	let numFree = 0;
	for (let i = 0; i < n; i++) {
		if (matches[i] === 0) {
			free[numFree++] = i;
		} else if (matches[i] === 1) {
			const j1 = rowsol[i];
			let min = Infinity;
			const base = i * n;
			for (let j = 0; j < n; j++) {
				if (j === j1) continue;
				const h = c[base + j] - v[j];
				if (h < min) min = h;
			}
			if (min !== Infinity) v[j1] -= min;
		}
	}

	// Augmenting row reduction, two passes. Each immediate retry strictly lowers a price, but by
	// as little as the gap between two costs, so the retries are capped (n measured fastest on
	// random matrices) and the rest is left to the augmentation phase, which is exact whatever
	// this phase leaves.
	let budget = n;
	for (let pass = 0; pass < 2 && numFree > 0; pass++) {
		let k = 0;
		const prevNumFree = numFree;
		numFree = 0;
		while (k < prevNumFree) {
			const i = free[k++];
			const base = i * n;
			let umin = c[base] - v[0];
			let j1 = 0;
			let usubmin = Infinity;
			let j2 = -1;
			for (let j = 1; j < n; j++) {
				const h = c[base + j] - v[j];
				if (h < usubmin) {
					if (h >= umin) {
						usubmin = h;
						j2 = j;
					} else {
						usubmin = umin;
						umin = h;
						j2 = j1;
						j1 = j;
					}
				}
			}
			if (umin === Infinity) throw new InfeasibleAssignmentError();
			let i0 = colsol[j1];
			const strict = umin < usubmin;
			if (strict) {
				v[j1] -= usubmin === Infinity ? 0 : usubmin - umin;
			} else if (i0 >= 0 && j2 >= 0) {
				j1 = j2;
				i0 = colsol[j2];
			}
			rowsol[i] = j1;
			colsol[j1] = i;
			if (i0 >= 0) {
				rowsol[i0] = -1;
				if (strict && budget-- > 0) free[--k] = i0;
				else free[numFree++] = i0;
			}
		}
	}

	const d = new Float64Array(n);
	const pred = new Int32Array(n);
	const collist = new Int32Array(n);
	for (let f = 0; f < numFree; f++) {
		const freeRow = free[f];
		const fbase = freeRow * n;
		for (let j = 0; j < n; j++) {
			d[j] = c[fbase + j] - v[j];
			pred[j] = freeRow;
			collist[j] = j;
		}
		// collist[0..low) are done, [low..up) sit at the current minimum distance, [up..n) are to do.
		let low = 0;
		let up = 0;
		let last = 0;
		let min = 0;
		let endOfPath = -1;
		while (endOfPath < 0) {
			if (up === low) {
				last = low - 1;
				min = d[collist[up++]];
				for (let k = up; k < n; k++) {
					const j = collist[k];
					const h = d[j];
					if (h <= min) {
						if (h < min) {
							up = low;
							min = h;
						}
						collist[k] = collist[up];
						collist[up++] = j;
					}
				}
				if (min === Infinity) throw new InfeasibleAssignmentError();
				for (let k = low; k < up; k++) {
					if (colsol[collist[k]] < 0) {
						endOfPath = collist[k];
						break;
					}
				}
				if (endOfPath >= 0) break;
			}
			const j1 = collist[low++];
			const i = colsol[j1];
			const base = i * n;
			const h = c[base + j1] - v[j1] - min;
			for (let k = up; k < n; k++) {
				const j = collist[k];
				const v2 = c[base + j] - v[j] - h;
				if (v2 < d[j]) {
					pred[j] = i;
					if (v2 === min) {
						if (colsol[j] < 0) {
							endOfPath = j;
							break;
						}
						collist[k] = collist[up];
						collist[up++] = j;
					}
					d[j] = v2;
				}
			}
		}
		for (let k = 0; k <= last; k++) {
			const j1 = collist[k];
			v[j1] += d[j1] - min;
		}
		for (;;) {
			const i = pred[endOfPath];
			colsol[endOfPath] = i;
			const j1 = endOfPath;
			endOfPath = rowsol[i];
			rowsol[i] = j1;
			if (i === freeRow) break;
		}
	}
}

/** Core solver for nr ≤ nc; fills col4row (all rows assigned) and row4col (-1 for free columns). */
function solveWide(
	c: Float64Array,
	nr: number,
	nc: number,
	col4row: Int32Array,
	row4col: Int32Array
): void {
	col4row.fill(-1);
	row4col.fill(-1);
	const u = new Float64Array(nr);
	const v = new Float64Array(nc);

	// Row reduction with a greedy start: u_i = min_j c_ij keeps every reduced cost ≥ 0 with v = 0,
	// and each row whose cheapest column is still free is matched at zero reduced cost. Columns
	// stay at v = 0 until they are matched, which the rectangular dual requires of free columns.
	for (let i = 0; i < nr; i++) {
		const base = i * nc;
		let best = Infinity;
		let bestJ = -1;
		for (let j = 0; j < nc; j++) {
			const x = c[base + j];
			const preferFree = x === best && bestJ >= 0 && row4col[bestJ] >= 0 && row4col[j] < 0;
			if (x < best || preferFree) {
				best = x;
				bestJ = j;
			}
		}
		if (bestJ < 0 || best === Infinity) throw new InfeasibleAssignmentError();
		u[i] = best;
		if (row4col[bestJ] < 0) {
			row4col[bestJ] = i;
			col4row[i] = bestJ;
		}
	}

	const spc = new Float64Array(nc);
	const path = new Int32Array(nc);
	const remaining = new Int32Array(nc);
	const visitedRows = new Int32Array(nr);
	const visitedCols = new Int32Array(nc);

	for (let cur = 0; cur < nr; cur++) {
		if (col4row[cur] >= 0) continue;
		spc.fill(Infinity);
		for (let it = 0; it < nc; it++) remaining[it] = nc - 1 - it;
		let numRemaining = nc;
		let nVisitedRows = 0;
		let nVisitedCols = 0;
		let minVal = 0;
		let i = cur;
		let sink = -1;

		// Dijkstra over columns on reduced costs, stopping at the first free column reached.
		while (sink < 0) {
			visitedRows[nVisitedRows++] = i;
			const base = i * nc;
			const offset = minVal - u[i];
			let lowest = Infinity;
			let index = -1;
			for (let it = 0; it < numRemaining; it++) {
				const j = remaining[it];
				const r = offset + c[base + j] - v[j];
				let s = spc[j];
				if (r < s) {
					path[j] = i;
					spc[j] = r;
					s = r;
				}
				if (s < lowest || (s === lowest && row4col[j] < 0)) {
					lowest = s;
					index = it;
				}
			}
			if (index < 0 || lowest === Infinity) throw new InfeasibleAssignmentError();
			minVal = lowest;
			const j = remaining[index];
			visitedCols[nVisitedCols++] = j;
			remaining[index] = remaining[--numRemaining];
			if (row4col[j] < 0) sink = j;
			else i = row4col[j];
		}

		u[cur] += minVal;
		for (let k = 1; k < nVisitedRows; k++) {
			const r = visitedRows[k];
			u[r] += minVal - spc[col4row[r]];
		}
		for (let k = 0; k < nVisitedCols; k++) {
			const j = visitedCols[k];
			v[j] -= minVal - spc[j];
		}

		let j = sink;
		for (;;) {
			const r = path[j];
			row4col[j] = r;
			const prev = col4row[r];
			col4row[r] = j;
			if (r === cur) break;
			j = prev;
		}
	}
}
