/** Run-relative time as the Run screen writes it: T+mm:ss.sss (hours folded into minutes). */
export function runTime(seconds: number): string {
	const sign = seconds < 0 ? '−' : '+';
	const ms = Math.round(Math.abs(seconds) * 1000);
	const m = Math.floor(ms / 60000);
	const s = Math.floor((ms % 60000) / 1000);
	const rest = ms % 1000;
	return `T${sign}${String(m).padStart(2, '0')}:${String(s).padStart(2, '0')}.${String(rest).padStart(3, '0')}`;
}

/** Absolute device time (seconds since the epoch) as an ISO-like UTC string with milliseconds. */
export function absoluteTime(epochSeconds: number): string {
	return new Date(epochSeconds * 1000).toISOString().replace('T', ' ').replace('Z', ' UTC');
}

export function formatDuration(seconds: number | null): string {
	if (seconds === null) return '—';
	const s = Math.round(seconds);
	const h = Math.floor(s / 3600);
	const m = Math.floor((s % 3600) / 60);
	const sec = s % 60;
	return h > 0
		? `${h} h ${String(m).padStart(2, '0')} min`
		: m > 0
			? `${m} min ${String(sec).padStart(2, '0')} s`
			: `${sec} s`;
}
