/** The scene view a link or a pin carries (`?view=` as compact JSON), and how it reads back. */
import { pinViewSchema, type PinView } from '$lib/validation/runs';

export type Layer = PinView['layers'][number];
export const allLayers: Layer[] = ['measurements', 'estimates', 'truth', 'assignment'];

export function decodeView(raw: string | null): PinView | null {
	if (!raw) return null;
	try {
		const parsed = pinViewSchema.safeParse(JSON.parse(raw));
		return parsed.success ? parsed.data : null;
	} catch {
		return null;
	}
}
