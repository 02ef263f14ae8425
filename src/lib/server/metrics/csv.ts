/** A small CSV writer (RFC 4180): comma-separated, CRLF line ends, quotes only where a cell needs them. */

export type Cell = string | number | null | undefined;

/** Numbers keep full precision (shortest round-trip form); null, undefined and non-finite numbers are empty. */
export function csvCell(value: Cell): string {
	if (value === null || value === undefined) return '';
	if (typeof value === 'number') return Number.isFinite(value) ? String(value) : '';
	return /[",\r\n]/.test(value) || value !== value.trim()
		? `"${value.replaceAll('"', '""')}"`
		: value;
}

export function csvLine(cells: readonly Cell[]): string {
	return cells.map(csvCell).join(',') + '\r\n';
}
