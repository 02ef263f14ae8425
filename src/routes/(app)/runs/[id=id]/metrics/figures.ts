/** Number formatting and wording for the summary figures. */
import type { NeesVerdict } from '$lib/metrics';

/** Four significant figures for reading; the downloads keep full precision. */
export function fmt(v: number | null | undefined): string {
	if (v === null || v === undefined || !Number.isFinite(v)) return '—';
	if (v === 0) return '0';
	const a = Math.abs(v);
	return a >= 1e5 || a < 1e-3 ? v.toExponential(3) : String(Number(v.toPrecision(4)));
}

export const verdictText: Record<NeesVerdict, { title: string; body: string }> = {
	consistent: {
		title: 'Covariances match the errors',
		body: 'The mean NEES sits inside the band a well-tuned tracker would produce.'
	},
	overconfident: {
		title: 'Covariances too tight',
		body: 'Errors are larger than the tracker claims (mean NEES above the band): it trusts its estimates too much.'
	},
	underconfident: {
		title: 'Covariances too loose',
		body: 'Errors are smaller than the tracker claims (mean NEES below the band): it is more cautious than it needs to be.'
	}
};
