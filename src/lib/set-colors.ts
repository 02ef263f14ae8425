/**
 * The set colours of the design (shared/DESIGN.md), declared once: the scene (pixi), the strips (uPlot),
 * the legends (through the Tailwind classes `text-set-*`, `bg-set-*`, …) and the Tailwind theme all read
 * them here. Sets are told apart by shape first; these colours come second, the same in both themes.
 */
export const setColors = {
	measurement: '#C07A12',
	estimate: '#0E7C74',
	truth: '#8E2C66',
	ego: '#243B6B',
	zone: '#4F46E5'
} as const;

export type SetColor = keyof typeof setColors;

/** `0xRRGGBB`, the form pixi takes. */
export function colorNumber(hex: string): number {
	return Number.parseInt(hex.slice(1), 16);
}

/** A CSS `rgba()` of a `#RRGGBB` colour. */
export function withAlpha(hex: string, alpha: number): string {
	const n = colorNumber(hex);
	return `rgba(${(n >> 16) & 0xff},${(n >> 8) & 0xff},${n & 0xff},${alpha})`;
}
