import { ApiError, endpoint } from '$server/api';
import { byteStream, csvChunks, jsonChunks } from '$server/metrics/encode';
import { metricsQuery } from '$server/metrics/query';
import { computedRows, storedRows, storedZoneNames } from '$server/metrics/rows';
import { metricRun } from '$server/metrics/run';
import { readQuery } from '$server/query';
import type { RequestHandler } from './$types';

/**
 * Per-frame metric rows, streamed: JSON `{unit, settings, source, rows, next_from_seq}` or, with
 * `Accept: text/csv` (or `?format=csv`), CSV with one `zone:<name>` column per zone. With `c` or `p`
 * the rows are computed for this request from the stored frames; otherwise they are the stored ones.
 */
export const GET: RequestHandler = endpoint(async ({ params, url, request }) => {
	const q = readQuery(url, metricsQuery);
	const run = await metricRun(params.id);
	if (!run) throw new ApiError('not_found', 'No such run');

	const onRequest = q.c !== undefined || q.p !== undefined;
	const settings = onRequest
		? { ...run.settings, c: q.c ?? run.settings.c, p: q.p ?? run.settings.p }
		: run.settings;
	const range = { fromSeq: q.from_seq, toSeq: q.to_seq, limit: q.limit };
	const source = {
		rows: onRequest ? computedRows(run, settings, range) : storedRows(run, range),
		limit: q.limit
	};

	const csv = q.format
		? q.format === 'csv'
		: (request.headers.get('accept') ?? '').includes('text/csv');
	if (csv) {
		const zoneNames = settings.zones.map((z) => z.name);
		if (!onRequest)
			for (const name of await storedZoneNames(run, range))
				if (!zoneNames.includes(name)) zoneNames.push(name);
		return new Response(byteStream(csvChunks(zoneNames, source)), {
			headers: {
				'content-type': 'text/csv; charset=utf-8',
				'content-disposition': `attachment; filename="skein-run-${run.id}-metrics.csv"`
			}
		});
	}
	const head = {
		run_id: run.id,
		unit: run.lengthUnit,
		source: onRequest ? 'computed' : 'stored',
		settings
	};
	return new Response(byteStream(jsonChunks(head, source)), {
		headers: {
			'content-type': 'application/json',
			...(q.format === 'json'
				? { 'content-disposition': `attachment; filename="skein-run-${run.id}-metrics.json"` }
				: {})
		}
	});
});
