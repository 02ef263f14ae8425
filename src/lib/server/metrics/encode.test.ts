import { describe, expect, it } from 'vitest';
import { byteStream, csvChunks, jsonChunks } from './encode';
import type { MetricRow } from './rows';

function row(seq: number, extra: Partial<MetricRow> = {}): MetricRow {
	return {
		seq,
		t: 100 + seq / 20,
		n_truth: 1,
		n_estimates: 1,
		n_measurements: 2,
		expected_cardinality: 0.9,
		gospa: 1.5,
		gospa_localization: 2.25,
		gospa_missed: 0,
		gospa_false: 0,
		ospa: 1.5,
		nees_mean: null,
		nees_count: 0,
		zones: { 'ego lane': 0.25 },
		...extra
	};
}

async function* batches(...b: MetricRow[][]): AsyncGenerator<MetricRow[]> {
	yield* b;
}

async function text(chunks: AsyncGenerator<string>): Promise<string> {
	return new Response(byteStream(chunks)).text();
}

describe('metric row encodings', () => {
	it('JSON: one document with the head, all rows, and no next page without a limit', async () => {
		const body = JSON.parse(
			await text(jsonChunks({ unit: 'm' }, { rows: batches([row(0), row(1)], [row(2)]) }))
		);
		expect(body.unit).toBe('m');
		expect(body.rows.map((r: MetricRow) => r.seq)).toEqual([0, 1, 2]);
		expect(body.rows[0]).toEqual(row(0));
		expect(body.next_from_seq).toBeNull();
	});

	it('JSON: stops at the limit and names the next seq, across batch edges', async () => {
		const body = JSON.parse(
			await text(jsonChunks({}, { rows: batches([row(0), row(1)], [row(2), row(3)]), limit: 2 }))
		);
		expect(body.rows.map((r: MetricRow) => r.seq)).toEqual([0, 1]);
		expect(body.next_from_seq).toBe(2);
		const empty = JSON.parse(await text(jsonChunks({}, { rows: batches() })));
		expect(empty).toEqual({ rows: [], next_from_seq: null });
	});

	it('CSV: header with zone columns, full-precision numbers, empty cells for null', async () => {
		const csv = await text(
			csvChunks(['ego lane', 'kerb, left'], {
				rows: batches([row(0, { n_truth: null, gospa: null, t: 0.1 + 0.2, zones: {} })], [row(1)])
			})
		);
		const lines = csv.split('\r\n');
		expect(lines[0]).toBe(
			'seq,t,n_truth,n_estimates,n_measurements,expected_cardinality,gospa,gospa_localization,gospa_missed,gospa_false,ospa,nees_mean,nees_count,zone:ego lane,"zone:kerb, left"'
		);
		expect(lines[1]).toBe('0,0.30000000000000004,,1,2,0.9,,2.25,0,0,1.5,,0,,');
		expect(lines[2]).toBe('1,100.05,1,1,2,0.9,1.5,2.25,0,0,1.5,,0,0.25,');
		expect(lines[3]).toBe('');
	});
});
