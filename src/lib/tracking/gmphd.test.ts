import kalman from 'kalman-filter';
import { describe, expect, it } from 'vitest';
import { GmPhdFilter, type MixtureComponent } from './gmphd';
import { cvProcessNoise, cvTransition } from './motion';
import { toRows } from './linalg';

const { KalmanFilter, State } = kalman;

function rows4(flat: readonly number[]): number[][] {
	return [0, 1, 2, 3].map((i) => flat.slice(i * 4, i * 4 + 4));
}

describe('GM-PHD with one object, pD = 1 and no clutter', () => {
	// With a single component, p_D = 1 and κ = 0 the update weight is p_D·w·q / (0 + p_D·w·q) = 1 and the
	// missed-detection term vanishes, so the recursion reduces to the Kalman filter (Vo & Ma 2006, Sec. III).
	const dt = 0.05;
	const q = 2;
	const r = 0.25;
	const m0 = [1, 2, 3, -4];
	const P0 = [1, 0.1, 0.2, 0, 0.1, 2, 0, 0.3, 0.2, 0, 3, 0.2, 0, 0.3, 0.2, 4];
	const zs = [
		[1.2, 1.7],
		[1.3, 1.45],
		[1.41, 1.3],
		[1.5, 1.05],
		[1.7, 0.9]
	];

	it('matches the kalman-filter package step by step (mean and covariance)', () => {
		const phd = new GmPhdFilter({
			dt,
			processNoise: q,
			R: [r, 0, 0, r],
			initial: [{ w: 1, m: m0, P: P0 }]
		});
		const kf = new KalmanFilter({
			observation: {
				dimension: 2,
				stateProjection: [
					[1, 0, 0, 0],
					[0, 1, 0, 0]
				],
				covariance: [
					[r, 0],
					[0, r]
				]
			},
			dynamic: {
				dimension: 4,
				transition: toRows(cvTransition(dt), 4, 4),
				covariance: toRows(cvProcessNoise(dt, q), 4, 4),
				init: { mean: m0.map((v) => [v]), covariance: rows4(P0) }
			}
		});
		let state = new State({ mean: m0.map((v) => [v]), covariance: rows4(P0) });
		for (const z of zs) {
			phd.predict([], () => 1);
			phd.update([z]);
			state = kf.correct({
				predicted: kf.predict({ previousCorrected: state }),
				observation: z
			});
			const mix = phd.mixture();
			expect(mix).toHaveLength(1);
			expect(mix[0].w).toBeCloseTo(1, 12);
			mix[0].m.forEach((v, i) => expect(v).toBeCloseTo(state.mean[i][0], 9));
			mix[0].P.forEach((v, i) =>
				expect(v).toBeCloseTo(state.covariance[Math.floor(i / 4)][i % 4], 9)
			);
		}
	});
});

describe('GM-PHD weight recursion on a hand-computed case', () => {
	// Vo & Ma 2006, Table I: predicted w = p_S·w (no spawning); updated missed w = (1 − p_D)·w;
	// detected w_j(z) = p_D·w_j·q_j(z) / (κ(z) + Σ_l p_D·w_l·q_l(z)), q_j(z) = N(z; H·m_j, H·P_j·Hᵀ + R).
	const dt = 1;
	const q = 0.3;
	const r = 0.4;
	const pS = 0.9;
	const pD = 0.8;
	const kappa = 0.01;
	const w = [0.6, 0.3];
	const means = [
		[0, 0, 1, 0],
		[10, 0, 0, 1]
	];
	const Z = [
		[1.5, 0.5],
		[9.0, 1.5]
	];

	// Predicted covariance with P = I: position variance 1 + dt²·1 + q·dt³/3 = 2.1, position–velocity
	// covariance dt·1 + q·dt²/2 = 1.15, velocity variance 1 + q·dt = 1.3 (hand-expanded F·P·Fᵀ + Q).
	const pPos = 1 + dt * dt + (q * dt ** 3) / 3;
	const pPosVel = dt + (q * dt * dt) / 2;
	const s = pPos + r; // innovation variance per axis, S = s·I
	const predicted = means.map(([x, y, vx, vy]) => [x + dt * vx, y + dt * vy, vx, vy]);
	const gauss = (z: number[], eta: number[]) =>
		Math.exp(-((z[0] - eta[0]) ** 2 + (z[1] - eta[1]) ** 2) / (2 * s)) / (2 * Math.PI * s);

	function build(): MixtureComponent[] {
		const f = new GmPhdFilter({
			dt,
			processNoise: q,
			R: [r, 0, 0, r],
			survival: pS,
			pruneThreshold: 1e-15,
			mergeThreshold: 0,
			initial: means.map((m, j) => ({
				w: w[j],
				m,
				P: [1, 0, 0, 0, 0, 1, 0, 0, 0, 0, 1, 0, 0, 0, 0, 1]
			}))
		});
		f.predict();
		const afterPredict = f.mixture();
		expect(afterPredict.map((c) => c.w)).toEqual(
			[pS * w[0], pS * w[1]].map((v) => expect.closeTo(v, 14))
		);
		f.update(
			Z,
			() => pD,
			() => kappa
		);
		return f.mixture();
	}

	it('gives the published predicted, missed and detected weights and means', () => {
		const mix = build();
		const wp = w.map((v) => pS * v);
		const expected: { w: number; m: number[] }[] = [];
		wp.forEach((wj, j) => expected.push({ w: (1 - pD) * wj, m: predicted[j] }));
		for (const z of Z) {
			const terms = wp.map((wj, j) => pD * wj * gauss(z, predicted[j]));
			const denom = kappa + terms[0] + terms[1];
			terms.forEach((t, j) => {
				const [x, y, vx, vy] = predicted[j];
				// Kalman gain for S = s·I: position pPos/s, velocity pPosVel/s.
				const gx = pPos / s;
				const gv = pPosVel / s;
				const dx = z[0] - x;
				const dy = z[1] - y;
				expected.push({
					w: t / denom,
					m: [x + gx * dx, y + gx * dy, vx + gv * dx, vy + gv * dy]
				});
			});
		}
		expect(mix).toHaveLength(6);
		for (const e of expected) {
			const hit = mix.find((c) => Math.abs(c.w - e.w) < 1e-12 * Math.max(1, e.w));
			expect(hit, `component with weight ${e.w}`).toBeDefined();
			hit?.m.forEach((v, i) => expect(v).toBeCloseTo(e.m[i], 10));
		}
		const total = mix.reduce((a, c) => a + c.w, 0);
		expect(total).toBeCloseTo(
			expected.reduce((a, c) => a + c.w, 0),
			12
		);
	});
});

describe('GM-PHD pruning, merging and extraction', () => {
	const base = { dt: 0.05, processNoise: 1, R: [0.25, 0, 0, 0.25] };
	const I = [1, 0, 0, 0, 0, 1, 0, 0, 0, 0, 1, 0, 0, 0, 0, 1];

	it('merges close components by moment matching and keeps the heaviest tag', () => {
		const f = new GmPhdFilter({
			...base,
			initial: [
				{ w: 0.4, m: [0, 0, 0, 0], P: I },
				{ w: 0.6, m: [1, 0, 0, 0], P: I },
				{ w: 0.5, m: [50, 0, 0, 0], P: I }
			]
		});
		const tagHeavy = f.mixture()[0].tag;
		// No measurements and p_D = 0 leave the weights as they are, so only merging acts.
		f.update([], () => 0);
		const mix = f.mixture();
		expect(mix).toHaveLength(2);
		// Vo & Ma 2006, Table II: w = Σw, m = Σw·m / w, P = Σw·(P + (m − m_i)(m − m_i)ᵀ) / w (by hand).
		expect(mix[0].w).toBeCloseTo(1, 12);
		expect(mix[0].m[0]).toBeCloseTo(0.6, 12);
		expect(mix[0].P[0]).toBeCloseTo(1 + (0.4 * 0.36 + 0.6 * 0.16), 12);
		expect(mix[0].tag).toBe(tagHeavy);
	});

	it('extracts round(w) copies of components above 0.5 with r clamped to [0, 1]', () => {
		const f = new GmPhdFilter({
			...base,
			initial: [
				{ w: 1.7, m: [0, 0, 0, 0], P: I },
				{ w: 0.7, m: [20, 0, 0, 0], P: I },
				{ w: 0.4, m: [40, 0, 0, 0], P: I }
			]
		});
		const est = f.estimates();
		expect(est).toHaveLength(3);
		expect(est.map((e) => e.x[0])).toEqual([0, 0, 20]);
		expect(est.map((e) => e.r)).toEqual([1, 1, 0.7]);
		expect(new Set(est.map((e) => e.id)).size).toBe(3);
		expect(est[2].P).toHaveLength(16);
	});

	it('keeps at most J_max components, the heaviest', () => {
		const initial = Array.from({ length: 30 }, (_, i) => ({
			w: 0.01 * (i + 1),
			m: [i * 100, 0, 0, 0],
			P: I
		}));
		const f = new GmPhdFilter({ ...base, maxComponents: 10, initial });
		f.update([], () => 0);
		const ws = f.mixture().map((c) => c.w);
		expect(ws).toHaveLength(10);
		expect(Math.min(...ws)).toBeCloseTo(0.21, 12);
	});

	it('keeps an object’s id across steps while it is detected', () => {
		const f = new GmPhdFilter({
			...base,
			initial: [{ w: 1, m: [0, 0, 10, 0], P: I }]
		});
		const ids = new Set<number>();
		for (let k = 1; k <= 40; k++) {
			f.predict([{ w: 0.02, m: [30, 30, 0, 0], P: I }]);
			f.update(
				[[10 * k * 0.05, 0]],
				() => 0.95,
				() => 1e-4
			);
			for (const e of f.estimates()) ids.add(e.id);
		}
		expect([...ids]).toHaveLength(1);
	});
});
