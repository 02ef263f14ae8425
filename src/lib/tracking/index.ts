export * as linalg from './linalg';
export { Rng, deriveSeed } from '../random';
export { cvTransition, cvProcessNoise, turnStep, addAccelNoise, type Vec4 } from './motion';
export { SensorView, fovArea, type SensorSpec } from './sensor';
export {
	GmPhdFilter,
	type BirthComponent,
	type GaussianComponent,
	type GmPhdOptions,
	type MixtureComponent,
	type PhdEstimate
} from './gmphd';
export { EgoTrack, World } from './world';
export { SCENARIOS, getScenario, listScenarios } from './scenarios';
export type * from './scenarios/types';
export {
	simulate,
	simulateFrom,
	frameAt,
	frameCount,
	birthComponents,
	createFilter,
	STATE_FIELDS,
	MEASUREMENT_FIELDS,
	type SimulateOptions,
	type SimStep
} from './simulate';
