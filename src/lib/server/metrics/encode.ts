/** Metric rows as a streamed response body: one JSON document, or CSV with a header row. */
import { csvLine, type Cell } from './csv';
import { metricColumns, type MetricRow } from './rows';

/** Rows, stopping after `limit` and reporting the seq that would come next. */
export interface RowSource {
	rows: AsyncGenerator<MetricRow[]>;
	limit?: number;
}

async function* limited(
	source: RowSource,
	onMore: (nextSeq: number) => void
): AsyncGenerator<MetricRow[]> {
	let left = source.limit ?? Number.POSITIVE_INFINITY;
	for await (const batch of source.rows) {
		if (batch.length > left) {
			if (left > 0) yield batch.slice(0, left);
			onMore(batch[left].seq);
			return;
		}
		left -= batch.length;
		yield batch;
	}
}

/** `{...head, rows: [...], next_from_seq}`, written as the rows arrive. */
export async function* jsonChunks(
	head: Record<string, unknown>,
	source: RowSource
): AsyncGenerator<string> {
	let next: number | null = null;
	const open = JSON.stringify(head);
	yield `${open.slice(0, -1)}${open.length > 2 ? ',' : ''}"rows":[`;
	let first = true;
	for await (const batch of limited(source, (seq) => (next = seq))) {
		let text = '';
		for (const row of batch) {
			text += (first ? '' : ',') + JSON.stringify(row);
			first = false;
		}
		yield text;
	}
	yield `],"next_from_seq":${JSON.stringify(next)}}`;
}

/** Header `seq,t,…,zone:<name>…`, then one line per row; an absent value is an empty cell. */
export async function* csvChunks(
	zoneNames: readonly string[],
	source: RowSource
): AsyncGenerator<string> {
	yield csvLine([...metricColumns, ...zoneNames.map((z) => `zone:${z}`)]);
	for await (const batch of limited(source, () => {})) {
		let text = '';
		for (const row of batch) text += csvLine(csvCells(row, zoneNames));
		yield text;
	}
}

export function csvCells(row: MetricRow, zoneNames: readonly string[]): Cell[] {
	return [...metricColumns.map((c) => row[c]), ...zoneNames.map((z) => row.zones[z])];
}

const encoder = new TextEncoder();

/** A pull-driven byte stream: the next chunk is produced only when the client has taken the last. */
export function byteStream(chunks: AsyncGenerator<string>): ReadableStream<Uint8Array> {
	return new ReadableStream<Uint8Array>({
		async pull(controller) {
			try {
				const { value, done } = await chunks.next();
				if (done) controller.close();
				else controller.enqueue(encoder.encode(value));
			} catch (err) {
				controller.error(err);
			}
		},
		async cancel() {
			await chunks.return(undefined);
		}
	});
}
