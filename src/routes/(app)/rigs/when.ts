/** Times on the rig screens read in UTC, minute precision, like the rest of Skein. */
export function when(value: Date | string | null | undefined, empty = '—'): string {
	return value ? new Date(value).toISOString().slice(0, 16).replace('T', ' ') : empty;
}
