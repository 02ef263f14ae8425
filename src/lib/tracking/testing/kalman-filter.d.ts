// The package ships no types; this covers the part the tests and the benchmark use.
declare module 'kalman-filter' {
	type Rows = number[][];
	interface StateInit {
		mean: Rows;
		covariance: Rows;
		index?: number;
	}
	class State {
		constructor(init: StateInit);
		mean: Rows;
		covariance: Rows;
	}
	interface KalmanFilterOptions {
		observation: { dimension: number; stateProjection: Rows; covariance: Rows };
		dynamic: {
			dimension: number;
			transition: Rows;
			covariance: Rows;
			init: StateInit;
		};
	}
	class KalmanFilter {
		constructor(opts: KalmanFilterOptions);
		predict(args: { previousCorrected: State }): State;
		correct(args: { predicted: State; observation: number[] }): State;
	}
	const api: { KalmanFilter: typeof KalmanFilter; State: typeof State };
	export default api;
}
