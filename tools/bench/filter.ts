/**
 * GM-PHD throughput and 4×4 linear algebra, printed as tables.
 *   npx tsx tools/bench/filter.ts        (npm run bench:filter)
 * 1. filter steps per second with 20 objects and 30 clutter returns per scan;
 * 2. the largest clutter rate that still runs at ≥ 20 steps/s (double, then bisect);
 * 3. this folder's 4×4 routines against ml-matrix and simple-linalg.
 */
import { createRequire } from 'node:module';
import { CholeskyDecomposition, Matrix, determinant, inverse } from 'ml-matrix';
import { GmPhdFilter, type BirthComponent } from '../../src/lib/tracking/gmphd';
import * as la from '../../src/lib/tracking/linalg';
import { cvProcessNoise, cvTransition } from '../../src/lib/tracking/motion';
import { Rng } from '../../src/lib/random';
import { SensorView, type SensorSpec } from '../../src/lib/tracking/sensor';

const simpleLinalg = createRequire(import.meta.url)(
	'simple-linalg'
) as typeof import('simple-linalg');

const DT = 0.05;
const OBJECTS = 20;
const TARGET_RATE = 20;

const sensor: SensorSpec = {
	name: 'bench-ring',
	range: 150,
	minRange: 0.5,
	halfAngle: Math.PI,
	pdNear: 0.95,
	pdFar: 0.9,
	noiseSd: 0.5,
	clutterRate: 30
};
const view = new SensorView(sensor, { x: 0, y: 0, heading: 0 });

interface Circler {
	radius: number;
	phase: number;
	omega: number;
}

/** Twenty objects on concentric circles: they never leave the field of view, so the load is steady. */
function makeObjects(rng: Rng): Circler[] {
	return Array.from({ length: OBJECTS }, (_, i) => ({
		radius: 20 + i * 6,
		phase: rng.uniform(0, 2 * Math.PI),
		omega: rng.uniform(5, 14) / (20 + i * 6)
	}));
}

function position(o: Circler, t: number): [number, number] {
	const a = o.phase + o.omega * t;
	return [o.radius * Math.cos(a), o.radius * Math.sin(a)];
}

const I4 = (v: number, w: number): number[] => [v, 0, 0, 0, 0, v, 0, 0, 0, 0, w, 0, 0, 0, 0, w];
const BIRTHS: BirthComponent[] = [
	[140, 0],
	[-140, 0],
	[0, 140],
	[0, -140]
].map(([x, y]) => ({ w: 0.02, m: [x, y, 0, 0], P: I4(25, 16) }));

/** Steps/s at a clutter rate (exactly `clutter` returns per scan), after a warm-up. */
function stepsPerSecond(
	clutter: number,
	budgetMs: number
): { rate: number; components: number; cardinality: number } {
	const rng = new Rng(2024);
	const objects = makeObjects(rng);
	const initial = objects.map((o): BirthComponent => {
		const [x, y] = position(o, 0);
		const v = o.omega * o.radius;
		const a = o.phase + Math.PI / 2;
		return { w: 1, m: [x, y, v * Math.cos(a), v * Math.sin(a)], P: I4(1, 4) };
	});
	const filter = new GmPhdFilter({
		dt: DT,
		processNoise: 4,
		R: [sensor.noiseSd ** 2, 0, 0, sensor.noiseSd ** 2],
		initial
	});
	let k = 0;
	const scan = (): number[][] => {
		const t = k * DT;
		const Z: number[][] = [];
		for (const o of objects) {
			const [x, y] = position(o, t);
			if (rng.next() < view.pd(x, y))
				Z.push([x + rng.normal(0, sensor.noiseSd), y + rng.normal(0, sensor.noiseSd)]);
		}
		for (let i = 0; i < clutter; i++) Z.push(view.samplePoint(rng));
		return Z;
	};
	const step = (): void => {
		const Z = scan();
		filter.predict(BIRTHS, (m) => (view.contains(m[0], m[1]) ? 0.99 : 0));
		filter.update(
			Z,
			(m) => view.pd(m[0], m[1]),
			(z) => view.clutterIntensity(z[0], z[1], clutter)
		);
		k++;
	};
	for (let i = 0; i < 20; i++) step();
	let steps = 0;
	let components = 0;
	let cardinality = 0;
	const start = performance.now();
	let elapsed = 0;
	while (elapsed < budgetMs || steps < 5) {
		step();
		steps++;
		components += filter.componentCount;
		cardinality += filter.expectedCardinality;
		elapsed = performance.now() - start;
	}
	return {
		rate: (steps * 1000) / elapsed,
		components: components / steps,
		cardinality: cardinality / steps
	};
}

function table(title: string, head: string[], rows: (string | number)[][]): void {
	const cells = [head, ...rows.map((r) => r.map(String))];
	const width = head.map((_, c) => Math.max(...cells.map((r) => r[c].length)));
	const line = (r: string[]) =>
		r.map((v, c) => (c === 0 ? v.padEnd(width[c]) : v.padStart(width[c]))).join('  ');
	console.log(`\n${title}`);
	console.log(line(head));
	console.log(width.map((w) => '─'.repeat(w)).join('  '));
	for (const r of cells.slice(1)) console.log(line(r));
}

const fmt = (v: number, digits = 0) =>
	v.toLocaleString('en-GB', {
		maximumFractionDigits: digits,
		minimumFractionDigits: digits
	});

// 1. Throughput at the reference load.
const base = stepsPerSecond(30, 3000);
table(
	`GM-PHD, ${OBJECTS} objects, 30 clutter returns per scan (${1 / DT} Hz frames)`,
	['measure', 'value'],
	[
		['steps per second', fmt(base.rate)],
		['ms per step', fmt(1000 / base.rate, 3)],
		['components after pruning (mean)', fmt(base.components, 1)],
		[`expected cardinality Σw (truth ${OBJECTS})`, fmt(base.cardinality, 2)],
		['real-time margin at 20 Hz', `${fmt(base.rate / 20, 1)}×`]
	]
);

// 2. Largest clutter rate still at ≥ 20 steps/s: double until too slow, then bisect.
const trials: (string | number)[][] = [];
const measure = (c: number): boolean => {
	const r = stepsPerSecond(c, 1200);
	trials.push([
		c,
		fmt(r.rate, 1),
		fmt(r.components, 1),
		fmt(r.cardinality, 1),
		r.rate >= TARGET_RATE ? 'yes' : 'no'
	]);
	return r.rate >= TARGET_RATE;
};
let good = 30;
let bad = 60;
if (measure(good)) {
	while (measure(bad)) {
		good = bad;
		bad *= 2;
	}
	while (bad - good > Math.max(8, good * 0.04)) {
		const mid = Math.round((good + bad) / 2);
		if (measure(mid)) good = mid;
		else bad = mid;
	}
} else good = 0;
table(
	`Clutter search: returns per scan vs steps per second (target ≥ ${TARGET_RATE})`,
	['clutter/scan', 'steps/s', 'components', `Σw (truth ${OBJECTS})`, 'meets'],
	trials
);
console.log(
	`\nLargest clutter rate at ≥ ${TARGET_RATE} steps/s with ${OBJECTS} objects: about ${good} returns per scan` +
		' (speed only: the Σw column shows how far tracking quality has fallen by then).'
);

// 3. 4×4 linear algebra.
const A = la.fromRows([
	[4, 2, 0.6, 0],
	[2, 5, 0.2, 0.4],
	[0.6, 0.2, 3, 0.5],
	[0, 0.4, 0.5, 2]
]);
const F = cvTransition(DT);
const Q = cvProcessNoise(DT, 4);
const rowsA = la.toRows(A, 4, 4);
const rowsF = la.toRows(F, 4, 4);
const rowsQ = la.toRows(Q, 4, 4);
const mA = new Matrix(rowsA);
const mF = new Matrix(rowsF);
const mQ = new Matrix(rowsQ);

let sink = 0;
function opsPerSecond(fn: () => number): number {
	for (let i = 0; i < 2000; i++) sink += fn();
	let n = 0;
	const start = performance.now();
	let elapsed = 0;
	while (elapsed < 250) {
		for (let i = 0; i < 1000; i++) sink += fn();
		n += 1000;
		elapsed = performance.now() - start;
	}
	return (n * 1000) / elapsed;
}

const out = la.zeros(4);
const tmp = la.zeros(4);
const L = la.zeros(4);
const I = la.identity(4);
const ops: [string, () => number, () => number, () => number][] = [
	[
		'multiply A·F',
		() => la.mul(A, F, 4, 4, 4, out)[5],
		() => mA.mmul(mF).get(1, 1),
		() => simpleLinalg.matMul(rowsA, rowsF)[1][1]
	],
	[
		'transpose',
		() => la.transpose(A, 4, 4, out)[1],
		() => mA.transpose().get(0, 1),
		() => simpleLinalg.transpose(rowsA)[0][1]
	],
	[
		'add',
		() => la.add(A, Q, out)[5],
		() => Matrix.add(mA, mQ).get(1, 1),
		() => simpleLinalg.add(rowsA, rowsQ)[1][1]
	],
	[
		'predict F·P·Fᵀ + Q',
		() => la.add(la.mulT(la.mul(F, A, 4, 4, 4, tmp), F, 4, 4, 4, out), Q, out)[0],
		() => mF.mmul(mA).mmul(mF.transpose()).add(mQ).get(0, 0),
		() =>
			simpleLinalg.add(
				simpleLinalg.matMul(simpleLinalg.matMul(rowsF, rowsA), simpleLinalg.transpose(rowsF)),
				rowsQ
			)[0][0]
	],
	[
		'inverse (SPD)',
		() => {
			la.cholesky(A, 4, L);
			return la.cholSolve(L, I, 4, 4, out)[0];
		},
		() => inverse(mA).get(0, 0),
		() => simpleLinalg.invert(rowsA)[0][0]
	],
	[
		'solve A·X = B (Cholesky)',
		() => {
			la.cholesky(A, 4, L);
			return la.cholSolve(L, F, 4, 4, out)[0];
		},
		() => new CholeskyDecomposition(mA).solve(mF).get(0, 0),
		() => simpleLinalg.matMul(simpleLinalg.invert(rowsA), rowsF)[0][0]
	],
	['determinant', () => la.det(A, 4), () => determinant(mA), () => Number.NaN]
];

const laRows: (string | number)[][] = [];
for (const [name, own, ml, simple] of ops) {
	const a = opsPerSecond(own);
	const b = opsPerSecond(ml);
	const c = Number.isNaN(simple()) ? Number.NaN : opsPerSecond(simple);
	const best = Math.max(b, Number.isNaN(c) ? 0 : c);
	laRows.push([
		name,
		fmt(a / 1e3),
		fmt(b / 1e3),
		Number.isNaN(c) ? '—' : fmt(c / 1e3),
		a >= best ? `skein ${fmt(a / best, 1)}×` : `package ${fmt(best / a, 1)}×`
	]);
}
table(
	'4×4 linear algebra, thousands of operations per second',
	['operation', 'skein', 'ml-matrix', 'simple-linalg', 'faster'],
	laRows
);
if (sink === 42) console.log('');
