/** The settings form's fields (strings, as typed) to and from metric settings. */
import type { MetricSettings } from '$lib/metrics';

export interface ZoneDraft {
	name: string;
	coords: string;
	xmin: string;
	xmax: string;
	ymin: string;
	ymax: string;
	/** degrees, counter-clockwise; settings keep radians */
	angle: string;
}

export interface SettingsDraft {
	c: string;
	p: string;
	distance: string;
	nees: string;
	motThreshold: string;
	/** comma-separated, one per state field */
	weights: string;
	zones: ZoneDraft[];
}

const zoneKeys = ['name', 'coords', 'xmin', 'xmax', 'ymin', 'ymax', 'angle'] as const;

const text = (n: number | undefined) => (n === undefined ? '' : String(n));
const degrees = (rad: number | undefined) =>
	rad ? String(Math.round(((rad * 180) / Math.PI) * 1e9) / 1e9) : '';

export function draftOf(s: MetricSettings): SettingsDraft {
	return {
		c: text(s.c),
		p: text(s.p),
		distance: s.distance,
		nees: s.nees ?? 'position',
		motThreshold: text(s.motThreshold),
		weights: s.weights ? s.weights.join(', ') : '',
		zones: s.zones.map((z) => ({
			name: z.name,
			coords: z.coords,
			xmin: text(z.x[0]),
			xmax: text(z.x[1]),
			ymin: text(z.y[0]),
			ymax: text(z.y[1]),
			angle: degrees(z.angle)
		}))
	};
}

/** Zone rows come as repeated `zone_<key>` fields, in order. */
export function draftFromForm(form: FormData): SettingsDraft {
	const one = (k: string) => {
		const v = form.get(k);
		return typeof v === 'string' ? v : '';
	};
	const all = (k: string) => form.getAll(`zone_${k}`).map((v) => (typeof v === 'string' ? v : ''));
	const columns = Object.fromEntries(zoneKeys.map((k) => [k, all(k)])) as Record<
		(typeof zoneKeys)[number],
		string[]
	>;
	const zones: ZoneDraft[] = columns.name.map((_, i) => {
		const z = Object.fromEntries(
			zoneKeys.map((k) => [k, columns[k][i] ?? ''])
		) as unknown as ZoneDraft;
		return z;
	});
	return {
		c: one('c'),
		p: one('p'),
		distance: one('distance'),
		nees: one('nees'),
		motThreshold: one('motThreshold'),
		weights: one('weights'),
		zones
	};
}

/**
 * The draft as settings input for validation. Numbers that do not read as numbers are reported here,
 * under the same paths validation uses (`c`, `zones.0.x`, …), and left out of the input.
 */
export function inputOf(d: SettingsDraft): {
	input: Record<string, unknown>;
	errors: Record<string, string>;
} {
	const errors: Record<string, string> = {};
	const num = (raw: string, path: string, required: boolean): number | undefined => {
		const s = raw.trim();
		if (s === '') {
			if (required) errors[path] ??= 'enter a number';
			return undefined;
		}
		const v = Number(s);
		if (!Number.isFinite(v)) {
			errors[path] ??= 'must be a number';
			return undefined;
		}
		return v;
	};
	const input: Record<string, unknown> = {
		c: num(d.c, 'c', true),
		p: num(d.p, 'p', true),
		distance: d.distance,
		nees: d.nees || undefined,
		motThreshold: num(d.motThreshold, 'motThreshold', false),
		zones: d.zones.map((z, i) => {
			const angle = num(z.angle, `zones.${i}.angle`, false);
			return {
				name: z.name,
				coords: z.coords,
				x: [num(z.xmin, `zones.${i}.x`, true), num(z.xmax, `zones.${i}.x`, true)],
				y: [num(z.ymin, `zones.${i}.y`, true), num(z.ymax, `zones.${i}.y`, true)],
				...(angle ? { angle: (angle * Math.PI) / 180 } : {})
			};
		})
	};
	if (d.distance === 'state' && d.weights.trim() !== '') {
		const parts = d.weights.split(',').map((w) => w.trim());
		const weights = parts.map(Number);
		if (parts.some((w) => w === '') || weights.some((w) => !Number.isFinite(w)))
			errors.weights = 'give numbers separated by commas';
		else input.weights = weights;
	}
	return { input, errors };
}
