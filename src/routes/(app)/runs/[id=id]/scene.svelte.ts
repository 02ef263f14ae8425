/**
 * The scene: a pixi.js application drawing one frame. Markers and thin lines go into two batches written in
 * place (scene-batches.ts); zones, the ego chevron, the grid and labels are a few display objects. Everything is
 * placed in screen space from the camera, so markers keep their pixel size while zooming. The canvas is
 * rendered only when something changed.
 */
import type { Application, BitmapText, Container, Graphics, Text } from 'pixi.js';
import type { FrameEvaluation, Zone } from '$lib/metrics';
import type { Estimate, Frame } from '$lib/protocol/types';
import { colorNumber, setColors } from '$lib/set-colors';
import type { Layer } from '$lib/viewer/view';
import {
	apply,
	compose,
	ellipse,
	identity,
	niceLength,
	rigidBetween,
	type Rigid
} from './geometry';
import type { Coords } from '$lib/runs';
import { LineBatch, MarkerBatch, rgba, Shape } from './scene-batches';

type Pixi = typeof import('pixi.js');

/** estimate labels are all shown only when at most this many estimates are on screen */
const LABELS_AT_MOST = 40;
const TRAIL_STEP_PX = 3;
/** the ego chevron, nose along +x */
const EGO_CHEVRON = [11, 0, -6, 7, -2, 0, -6, -7];
const C = {
	measurement: colorNumber(setColors.measurement),
	estimate: colorNumber(setColors.estimate),
	truth: colorNumber(setColors.truth),
	ego: colorNumber(setColors.ego),
	zone: colorNumber(setColors.zone)
};

export interface SceneInput {
	frame: Frame | null;
	trail: Frame[];
	evaluation: FrameEvaluation | null;
	layers: Layer[];
	sigma: number;
	coords: Coords;
	selected: string | null;
}

export interface RunGeometry {
	coords: Coords;
	stateFields: string[];
	measurementFields: string[];
	zones: Zone[];
}

export interface Pickable {
	key: string;
	kind: 'measurement' | 'estimate' | 'truth';
	index: number;
	sx: number;
	sy: number;
}

declare global {
	interface Window {
		/** the scene's render counter, read by the viewer benchmark */
		__skeinScene?: {
			frames: number;
			draws: number;
			seq: number | null;
			t: number | null;
			drawnAt: number;
			drawMs: number;
			/** frames in the trail last drawn */
			trail: number;
		};
	}
}

class Pool<T extends Container> {
	items: T[] = [];
	used = 0;
	constructor(
		private parent: Container,
		private make: () => T
	) {}
	next(): T {
		let item = this.items[this.used];
		if (!item) {
			item = this.make();
			this.items.push(item);
			this.parent.addChild(item);
		}
		item.visible = true;
		this.used++;
		return item;
	}
	/** hides what this draw did not use */
	end() {
		for (let i = this.used; i < this.items.length; i++) this.items[i].visible = false;
		this.used = 0;
	}
}

export function objectKey(kind: 'e' | 't', id: string | number | undefined, index: number): string {
	return id === undefined ? `${kind}#${index}` : `${kind}:${id}`;
}

export class SceneManager {
	hover = $state<Pickable | null>(null);
	zoom = 8;
	cx = 0;
	cy = 0;
	picks: Pickable[] = [];
	onSelect: (key: string | null) => void = () => {};

	#pixi: Pixi;
	#app: Application;
	#geo: RunGeometry;
	#input: SceneInput | null = null;
	#dirty = true;
	#g = {} as Record<'grid' | 'zones' | 'scale' | 'select', Graphics>;
	#gridKey = '';
	#lines!: LineBatch;
	#marks!: MarkerBatch;
	#labels!: Pool<BitmapText>;
	#zoneText!: Pool<Text>;
	#scaleText!: Text;
	#ego!: Graphics;
	#theme = { grid: 0xe4e0d6, ink: 0x1c2230 };
	#drag: { x: number; y: number } | null = null;
	#ro: ResizeObserver;
	#host: HTMLElement;

	private constructor(pixi: Pixi, app: Application, host: HTMLElement, geo: RunGeometry) {
		this.#pixi = pixi;
		this.#app = app;
		this.#geo = geo;
		this.#host = host;
		const { Container, Graphics, BitmapText, Text } = pixi;
		const root = app.stage;
		const layer = () => root.addChild(new Container());
		this.#g.grid = root.addChild(new Graphics());
		this.#g.zones = root.addChild(new Graphics());
		this.#zoneText = new Pool(
			layer(),
			() =>
				new Text({ text: '', style: { fontFamily: 'IBM Plex Mono', fontSize: 11, fill: C.zone } })
		);
		this.#lines = new LineBatch(pixi);
		root.addChild(this.#lines.mesh);
		this.#marks = new MarkerBatch(pixi, app.renderer.resolution);
		root.addChild(this.#marks.mesh);
		this.#labels = new Pool(
			layer(),
			() =>
				new BitmapText({
					text: '',
					style: { fontFamily: 'IBM Plex Mono', fontSize: 10, fill: C.estimate }
				})
		);
		this.#ego = root.addChild(new Graphics());
		this.#g.select = root.addChild(new Graphics());
		this.#g.scale = root.addChild(new Graphics());
		this.#scaleText = root.addChild(
			new Text({ text: '', style: { fontFamily: 'IBM Plex Mono', fontSize: 11, fill: 0x1c2230 } })
		);

		window.__skeinScene ??= {
			frames: 0,
			draws: 0,
			seq: null,
			t: null,
			drawnAt: 0,
			drawMs: 0,
			trail: 0
		};
		// render on demand: a paused scene costs nothing, a playing one one render per new frame
		app.ticker.remove(app.render, app);
		app.ticker.add(() => {
			const stats = window.__skeinScene!;
			stats.frames++;
			if (!this.#dirty) return;
			const t0 = performance.now();
			this.#draw();
			app.render();
			stats.drawMs += performance.now() - t0;
		});
		this.#ro = new ResizeObserver(() => {
			app.renderer.resize(Math.max(1, host.clientWidth), Math.max(1, host.clientHeight));
			this.invalidate();
		});
		this.#ro.observe(host);
		this.readTheme();
		this.#bindPointer(app.canvas);
	}

	static async create(host: HTMLElement, geo: RunGeometry): Promise<SceneManager> {
		// the page's Content-Security-Policy forbids eval: pixi then needs its eval-free shader and uniform code
		const [pixi] = await Promise.all([import('pixi.js'), import('pixi.js/unsafe-eval')]);
		const app = new pixi.Application();
		// multisampling costs software WebGL (SwiftShader, llvmpipe: VMs and remote desktops) half its frame rate;
		// markers are smoothed by their shader anyway, only thin lines lose their antialiasing there
		await app.init({
			width: Math.max(1, host.clientWidth),
			height: Math.max(1, host.clientHeight),
			antialias: !softwareWebGL(),
			preference: 'webgl',
			autoDensity: true,
			resolution: window.devicePixelRatio || 1
		});
		app.canvas.setAttribute('data-testid', 'scene-canvas');
		host.appendChild(app.canvas);
		return new SceneManager(pixi, app, host, geo);
	}

	/** follows the page theme (Paper or Night) */
	readTheme() {
		const css = getComputedStyle(document.documentElement);
		const hex = (v: string, fallback: number) => {
			const m = v.trim().match(/^#([0-9a-f]{6})$/i);
			return m ? parseInt(m[1], 16) : fallback;
		};
		this.#app.renderer.background.color = hex(css.getPropertyValue('--sk-panel'), 0xffffff);
		this.#theme = {
			grid: hex(css.getPropertyValue('--sk-hairline'), 0xe4e0d6),
			ink: hex(css.getPropertyValue('--sk-ink'), 0x1c2230)
		};
		this.#scaleText.style.fill = this.#theme.ink;
		// the navy chevron keeps its colour; an outline in the page's ink keeps it visible on Night's dark panels
		this.#ego
			.clear()
			.poly(EGO_CHEVRON)
			.fill(C.ego)
			.stroke({ width: 1.5, color: this.#theme.ink, alpha: 0.85, join: 'round' });
		this.invalidate();
	}

	set(input: SceneInput) {
		this.#input = input;
		this.invalidate();
	}

	invalidate() {
		this.#dirty = true;
	}

	get view() {
		return { zoom: this.zoom, cx: this.cx, cy: this.cy };
	}

	setCamera(zoom: number, cx: number, cy: number) {
		this.zoom = zoom;
		this.cx = cx;
		this.cy = cy;
		this.invalidate();
	}

	#w() {
		return this.#app.screen.width;
	}
	#h() {
		return this.#app.screen.height;
	}

	/** the transform from the run's coordinates to the displayed ones for one frame */
	#toDisplay(frame: Frame, coords: Coords): Rigid {
		return rigidBetween(this.#geo.coords, coords, frame.ego);
	}

	fit() {
		const inp = this.#input;
		if (!inp?.frame) return;
		const pts = this.#points(inp.frame, inp.coords);
		if (!pts.length) return;
		let [x0, y0, x1, y1] = [Infinity, Infinity, -Infinity, -Infinity];
		for (const [x, y] of pts) {
			x0 = Math.min(x0, x);
			x1 = Math.max(x1, x);
			y0 = Math.min(y0, y);
			y1 = Math.max(y1, y);
		}
		const span = Math.max(x1 - x0, y1 - y0, 10);
		this.setCamera(Math.min(this.#w(), this.#h()) / (span * 1.15), (x0 + x1) / 2, (y0 + y1) / 2);
	}

	#points(frame: Frame, coords: Coords): [number, number][] {
		const tr = this.#toDisplay(frame, coords);
		const { ix, iy } = this.#layout();
		const out: [number, number][] = [];
		for (const e of frame.estimates ?? []) out.push(apply(tr, e.x[ix], e.x[iy]));
		for (const t of frame.truth ?? []) out.push(apply(tr, t.x[ix], t.x[iy]));
		if (frame.ego)
			out.push(
				apply(compose(rigidBetween('world', coords, frame.ego), identity), frame.ego.x, frame.ego.y)
			);
		return out;
	}

	#layout() {
		const f = this.#geo.stateFields;
		const m = this.#geo.measurementFields;
		const ix = Math.max(0, f.indexOf('x'));
		const iy = f.indexOf('y') < 0 ? 1 : f.indexOf('y');
		return {
			ix,
			iy,
			dim: f.length,
			mx: Math.max(0, m.indexOf('x')),
			my: m.indexOf('y') < 0 ? 1 : m.indexOf('y')
		};
	}

	#draw() {
		this.#dirty = false;
		window.__skeinScene!.draws++;
		const W = this.#w();
		const H = this.#h();
		const z = this.zoom;
		const sx = (x: number) => W / 2 + (x - this.cx) * z;
		const sy = (y: number) => H / 2 - (y - this.cy) * z;
		this.#drawGrid(W, H, sx, sy);
		const inp = this.#input;
		const picks: Pickable[] = [];
		const lines = this.#lines;
		const marks = this.#marks;
		lines.clear();
		marks.clear();
		this.#g.zones.clear();
		this.#g.select.clear();
		this.#ego.visible = false;
		if (inp?.frame) {
			const f = inp.frame;
			const tr = this.#toDisplay(f, inp.coords);
			const { ix, iy, dim, mx, my } = this.#layout();
			const on = (l: Layer) => inp.layers.includes(l);
			this.#drawZones(f, inp, sx, sy);
			this.#drawTrails(inp, sx, sy);

			if (on('measurements')) {
				const color = rgba(C.measurement);
				(f.measurements ?? []).forEach((m, i) => {
					const [x, y] = apply(tr, m.z[mx], m.z[my]);
					const [px, py] = [sx(x), sy(y)];
					marks.mark(Shape.cross, px, py, color);
					picks.push({ key: `m#${i}`, kind: 'measurement', index: i, sx: px, sy: py });
				});
			}

			const est = f.estimates ?? [];
			const truth = f.truth ?? [];
			const screen = (list: { x: number[] }[]) =>
				list.map((o) => {
					const [x, y] = apply(tr, o.x[ix], o.x[iy]);
					return [sx(x), sy(y)] as [number, number];
				});
			const estScreen = screen(est);
			const truthScreen = screen(truth);

			if (on('estimates')) {
				est.forEach((e, i) => {
					const [px, py] = estScreen[i];
					const alpha = Math.max(0.25, e.r ?? 1);
					if (e.P && e.P.length === dim * dim) {
						const el = ellipse(
							e.P[ix * dim + ix],
							e.P[ix * dim + iy],
							e.P[iy * dim + iy],
							inp.sigma
						);
						// an ellipse inside the dot would not show; skip it
						if (el && el.rx * z >= 3)
							lines.ellipse(
								px,
								py,
								el.rx * z,
								Math.max(el.ry * z, 0.5),
								-(el.angle + tr.rot),
								rgba(C.estimate, alpha)
							);
					}
					marks.mark(Shape.dot, px, py, rgba(C.estimate, alpha));
					picks.push({ key: objectKey('e', e.id, i), kind: 'estimate', index: i, sx: px, sy: py });
				});
				this.#drawLabels(inp, est, estScreen, W, H);
			} else this.#labels.end();

			if (on('truth')) {
				const color = rgba(C.truth);
				truth.forEach((t, i) => {
					marks.mark(Shape.square, truthScreen[i][0], truthScreen[i][1], color);
					picks.push({
						key: objectKey('t', t.id, i),
						kind: 'truth',
						index: i,
						sx: truthScreen[i][0],
						sy: truthScreen[i][1]
					});
				});
			}

			const gospa = inp.evaluation?.gospa;
			if (on('assignment') && gospa) {
				const link = rgba(this.#theme.ink, 0.55);
				for (const [ti, ej] of gospa.pairs)
					lines.segment(
						truthScreen[ti][0],
						truthScreen[ti][1],
						estScreen[ej][0],
						estScreen[ej][1],
						link
					);
				const missed = rgba(C.truth);
				gospa.truthToEstimate.forEach((j, i) => {
					if (j < 0) marks.mark(Shape.ring, truthScreen[i][0], truthScreen[i][1], missed);
				});
				const invented = rgba(C.estimate);
				gospa.estimateToTruth.forEach((i, j) => {
					if (i < 0) marks.mark(Shape.dashedRing, estScreen[j][0], estScreen[j][1], invented);
				});
			}

			if (f.ego) {
				const egoTr = rigidBetween('world', inp.coords, f.ego);
				const [ex, ey] = apply(egoTr, f.ego.x, f.ego.y);
				this.#ego.visible = true;
				this.#ego.position.set(sx(ex), sy(ey));
				this.#ego.rotation = -(f.ego.heading + egoTr.rot);
			}

			const sel = inp.selected ? picks.find((p) => p.key === inp.selected) : undefined;
			if (sel)
				this.#g.select
					.circle(sel.sx, sel.sy, 13)
					.stroke({ width: 2, color: this.#theme.ink, alpha: 0.8 });
		} else this.#labels.end();
		lines.end();
		marks.end();
		this.#zoneText.end();
		this.picks = picks;
		const stats = window.__skeinScene!;
		stats.seq = inp?.frame?.seq ?? null;
		stats.t = inp?.frame?.t ?? null;
		stats.trail = inp?.trail.length ?? 0;
		stats.drawnAt = performance.now();
	}

	/**
	 * Labels for the selected and hovered estimates, and for every estimate on screen once few enough are in
	 * view to read them (zoomed in); hundreds of labels at once are unreadable and cost a text object each.
	 */
	#drawLabels(inp: SceneInput, est: Estimate[], at: [number, number][], W: number, H: number) {
		const visible: number[] = [];
		for (let i = 0; i < est.length; i++)
			if (at[i][0] >= 0 && at[i][0] <= W && at[i][1] >= 0 && at[i][1] <= H) visible.push(i);
		// a scratch set for this redraw, not state
		// eslint-disable-next-line svelte/prefer-svelte-reactivity
		const wanted = new Set<number>(visible.length <= LABELS_AT_MOST ? visible : []);
		for (const key of [inp.selected, this.hover?.kind === 'estimate' ? this.hover.key : null]) {
			if (!key || key[0] !== 'e') continue;
			const i = est.findIndex((e, k) => objectKey('e', e.id, k) === key);
			if (i >= 0) wanted.add(i);
		}
		for (const i of wanted) {
			const e = est[i];
			if (e.id === undefined && !e.label) continue;
			const t = this.#labels.next();
			const text = e.label ? `${e.id ?? ''} ${e.label}`.trim() : String(e.id);
			if (t.text !== text) t.text = text;
			t.position.set(at[i][0] + 6, at[i][1] - 14);
			t.alpha = Math.max(0.25, e.r ?? 1);
		}
		this.#labels.end();
	}

	#drawGrid(W: number, H: number, sx: (x: number) => number, sy: (y: number) => number) {
		const key = `${W} ${H} ${this.zoom} ${this.cx} ${this.cy} ${this.#theme.grid} ${this.#theme.ink}`;
		if (key === this.#gridKey) return;
		this.#gridKey = key;
		const g = this.#g.grid;
		g.clear();
		const step = niceLength(this.zoom, 60);
		const x0 = this.cx - W / 2 / this.zoom;
		const y0 = this.cy - H / 2 / this.zoom;
		for (let x = Math.floor(x0 / step) * step; x <= x0 + W / this.zoom; x += step)
			g.moveTo(sx(x), 0).lineTo(sx(x), H);
		for (let y = Math.floor(y0 / step) * step; y <= y0 + H / this.zoom; y += step)
			g.moveTo(0, sy(y)).lineTo(W, sy(y));
		g.stroke({ width: 1, color: this.#theme.grid, pixelLine: true });
		const len = niceLength(this.zoom, 100);
		const s = this.#g.scale;
		s.clear();
		s.moveTo(16, H - 18)
			.lineTo(16 + len * this.zoom, H - 18)
			.moveTo(16, H - 23)
			.lineTo(16, H - 13);
		s.moveTo(16 + len * this.zoom, H - 23).lineTo(16 + len * this.zoom, H - 13);
		s.stroke({ width: 1.5, color: this.#theme.ink });
		const label = `${len >= 1 ? len : len.toPrecision(1)} m`;
		if (this.#scaleText.text !== label) this.#scaleText.text = label;
		this.#scaleText.position.set(16, H - 38);
	}

	#drawZones(f: Frame, inp: SceneInput, sx: (x: number) => number, sy: (y: number) => number) {
		const g = this.#g.zones;
		const probs = inp.evaluation?.metrics.zones ?? {};
		for (const zone of this.#geo.zones) {
			if (zone.coords !== inp.coords && !f.ego) continue;
			const tr = rigidBetween(zone.coords, inp.coords, f.ego);
			const cxz = (zone.x[0] + zone.x[1]) / 2;
			const cyz = (zone.y[0] + zone.y[1]) / 2;
			const a = zone.angle ?? 0;
			const corners = [
				[zone.x[0], zone.y[0]],
				[zone.x[1], zone.y[0]],
				[zone.x[1], zone.y[1]],
				[zone.x[0], zone.y[1]]
			].map(([x, y]) => {
				const dx = x - cxz;
				const dy = y - cyz;
				const [rx, ry] = [
					cxz + Math.cos(a) * dx - Math.sin(a) * dy,
					cyz + Math.sin(a) * dx + Math.cos(a) * dy
				];
				const [wx, wy] = apply(tr, rx, ry);
				return [sx(wx), sy(wy)] as [number, number];
			});
			g.poly(corners.flat()).fill({ color: C.zone, alpha: 0.12 });
			for (let k = 0; k < 4; k++) dash(g, corners[k], corners[(k + 1) % 4], 6, 4);
			g.stroke({ width: 1.5, color: C.zone });
			const p = probs[zone.name];
			const t = this.#zoneText.next();
			const label = `${zone.name} · P ${p === undefined ? '—' : p.toFixed(2)}`;
			if (t.text !== label) t.text = label;
			t.position.set(
				Math.min(...corners.map((c) => c[0])) + 4,
				Math.min(...corners.map((c) => c[1])) - 16
			);
		}
	}

	/** trails thinned to a point every TRAIL_STEP_PX on screen at most: finer steps would not show */
	#drawTrails(inp: SceneInput, sx: (x: number) => number, sy: (y: number) => number) {
		if (!inp.frame || inp.trail.length < 2) return;
		// trails go through world coordinates frame by frame, then into the current display frame
		const toCurrent = rigidBetween('world', inp.coords, inp.frame.ego);
		const { ix, iy } = this.#layout();
		const stride = Math.max(1, Math.floor(inp.trail.length / 25));
		for (const [kind, on, color] of [
			['estimates', inp.layers.includes('estimates'), rgba(C.estimate, 0.5)],
			['truth', inp.layers.includes('truth'), rgba(C.truth, 0.5)]
		] as const) {
			if (!on) continue;
			// eslint-disable-next-line svelte/prefer-svelte-reactivity -- scratch map for this redraw, not state
			const last = new Map<string | number, [number, number]>();
			for (let k = 0; k < inp.trail.length; k += stride) {
				const f = inp.trail[k];
				const tr =
					this.#geo.coords === 'ego' && !f.ego
						? identity
						: compose(toCurrent, rigidBetween(this.#geo.coords, 'world', f.ego));
				const final = k + stride >= inp.trail.length;
				for (const o of f[kind] ?? []) {
					if (o.id === undefined) continue;
					const [x, y] = apply(tr, o.x[ix], o.x[iy]);
					const [px, py] = [sx(x), sy(y)];
					const prev = last.get(o.id);
					if (!prev) last.set(o.id, [px, py]);
					else if (final || (px - prev[0]) ** 2 + (py - prev[1]) ** 2 >= TRAIL_STEP_PX ** 2) {
						this.#lines.segment(prev[0], prev[1], px, py, color);
						prev[0] = px;
						prev[1] = py;
					}
				}
			}
		}
	}

	#bindPointer(canvas: HTMLCanvasElement) {
		canvas.addEventListener('pointerdown', (e) => {
			this.#drag = { x: e.clientX, y: e.clientY };
			canvas.setPointerCapture(e.pointerId);
		});
		canvas.addEventListener('pointermove', (e) => {
			if (this.#drag && (e.buttons & 1) === 1) {
				this.cx -= (e.clientX - this.#drag.x) / this.zoom;
				this.cy += (e.clientY - this.#drag.y) / this.zoom;
				this.#drag = { x: e.clientX, y: e.clientY };
				this.invalidate();
				return;
			}
			const r = canvas.getBoundingClientRect();
			this.#setHover(this.pick(e.clientX - r.left, e.clientY - r.top));
		});
		canvas.addEventListener('pointerup', (e) => {
			const start = this.#drag;
			this.#drag = null;
			if (start && Math.hypot(e.clientX - start.x, e.clientY - start.y) < 3) {
				const r = canvas.getBoundingClientRect();
				this.onSelect(this.pick(e.clientX - r.left, e.clientY - r.top)?.key ?? null);
			}
		});
		canvas.addEventListener('pointerleave', () => this.#setHover(null));
		canvas.addEventListener(
			'wheel',
			(e) => {
				e.preventDefault();
				const r = canvas.getBoundingClientRect();
				const px = e.clientX - r.left;
				const py = e.clientY - r.top;
				const wx = this.cx + (px - this.#w() / 2) / this.zoom;
				const wy = this.cy - (py - this.#h() / 2) / this.zoom;
				const zoom = Math.min(2000, Math.max(0.05, this.zoom * Math.exp(-e.deltaY * 0.0015)));
				this.setCamera(zoom, wx - (px - this.#w() / 2) / zoom, wy + (py - this.#h() / 2) / zoom);
			},
			{ passive: false }
		);
	}

	#setHover(pick: Pickable | null) {
		if (pick?.key === this.hover?.key) return;
		this.hover = pick;
		// the hovered estimate gets its label
		this.invalidate();
	}

	/** the object nearest a screen point, within 10 px; estimates and truth before measurements */
	pick(x: number, y: number): Pickable | null {
		let best: Pickable | null = null;
		let bestD = 100;
		for (const p of this.picks) {
			const d = (p.sx - x) ** 2 + (p.sy - y) ** 2 + (p.kind === 'measurement' ? 20 : 0);
			if (d < bestD) {
				bestD = d;
				best = p;
			}
		}
		return best;
	}

	/** screen position of an object by key, for tests and the inspector */
	screenOf(key: string): { x: number; y: number } | null {
		const p = this.picks.find((q) => q.key === key);
		return p ? { x: p.sx, y: p.sy } : null;
	}

	destroy() {
		this.#ro.disconnect();
		this.#lines.destroy();
		this.#marks.destroy();
		this.#app.destroy(true, { children: true });
		void this.#pixi;
		void this.#host;
	}
}

/** true when WebGL is rasterised on the CPU */
function softwareWebGL(): boolean {
	const gl = document.createElement('canvas').getContext('webgl');
	if (!gl) return true;
	const info = gl.getExtension('WEBGL_debug_renderer_info');
	const name = String(gl.getParameter(info ? info.UNMASKED_RENDERER_WEBGL : gl.RENDERER));
	gl.getExtension('WEBGL_lose_context')?.loseContext();
	return /swiftshader|llvmpipe|softpipe|software/i.test(name);
}

function dash(
	g: Graphics,
	[x0, y0]: [number, number],
	[x1, y1]: [number, number],
	on: number,
	off: number
) {
	const len = Math.hypot(x1 - x0, y1 - y0);
	if (len === 0) return;
	const ux = (x1 - x0) / len;
	const uy = (y1 - y0) / len;
	for (let d = 0; d < len; d += on + off) {
		const e = Math.min(len, d + on);
		g.moveTo(x0 + ux * d, y0 + uy * d).lineTo(x0 + ux * e, y0 + uy * e);
	}
}
