/** Query parameters of the metrics endpoint: the schema lives with the other query schemas. */
export { metricsQuery, type MetricsQuery } from '$lib/validation/metrics';
