export { solveAssignment, InfeasibleAssignmentError, type Assignment } from './assignment';
export {
	closePairs,
	gospa,
	gospaFromClosePairs,
	gospaFromSquaredDistances,
	ospa,
	squaredDistance,
	type ClosePairs,
	type GospaOptions,
	type GospaResult,
	type OspaResult,
	type Point
} from './gospa';
export {
	cardinalityDistribution,
	cardinalityError,
	cardinalityStats,
	expectedCardinality,
	existence,
	type CardinalityError,
	type CardinalityStats
} from './cardinality';
export {
	nees,
	neesBounds,
	neesVerdict,
	subBlock,
	type NeesBounds,
	type NeesVerdict
} from './consistency';
export {
	chiSquareCdf,
	chiSquareQuantile,
	erfc,
	gammaP,
	gammaQ,
	logGamma,
	normalCdf,
	normalQuantile
} from './special';
export {
	bivariateNormalCdf,
	bivariateNormalUpper,
	gaussianRectProbability,
	type Cov2,
	type Rect
} from './bivariate-normal';
export {
	changeCoords,
	insideProbability,
	zoneOccupancy,
	type PlanarObject,
	type Zone
} from './zones';
export {
	DEFAULT_MOT_THRESHOLD,
	TrackAccumulator,
	type TrackFigures,
	type TrackFrame,
	type TrackObject
} from './tracks';
export {
	defaultMetricSettings,
	egoLaneZone,
	metricSettingsSchema,
	parseMetricSettings,
	zoneSchema,
	type DistanceMode,
	type MetricSettings,
	type MetricSettingsResult
} from './settings';
export {
	evaluateFrame,
	frameMetrics,
	neesDimension,
	stateLayout,
	type FrameContext,
	type FrameEvaluation,
	type FrameMetrics,
	type StateLayout
} from './frame';
export { RunSummaryAccumulator, type MeanStats, type RunSummary } from './summary';
