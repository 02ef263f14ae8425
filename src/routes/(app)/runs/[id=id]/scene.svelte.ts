/**
 * The scene: a pixi.js application drawing one frame with pooled display objects that are moved, scaled and
 * shown or hidden in place (never rebuilt per frame). Everything is placed in screen space from the camera,
 * so markers keep their pixel size while zooming.
 */
import type { Application, BitmapText, Container, Graphics, GraphicsContext, Text } from 'pixi.js';
import type { FrameEvaluation, Zone } from '$lib/metrics';
import type { Frame } from '$lib/protocol/types';
import type { Layer } from '$lib/viewer/view';
import { apply, compose, ellipse, identity, niceLength, rigidBetween, type Coords, type Rigid } from './geometry';

type Pixi = typeof import('pixi.js');

const C = { measurement: 0xc07a12, estimate: 0x0e7c74, truth: 0x8e2c66, ego: 0x243b6b, zone: 0x4f46e5 };

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
		__skeinScene?: { frames: number; draws: number; seq: number | null; t: number | null; drawnAt: number };
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
	#g = {} as Record<'grid' | 'zones' | 'trails' | 'links' | 'scale' | 'select', Graphics>;
	#pools = {} as Record<'cross' | 'dot' | 'ellipse' | 'square' | 'missed' | 'false', Pool<Graphics>>;
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
		const { Container, Graphics, GraphicsContext, BitmapText, Text } = pixi;
		const root = app.stage;
		const layer = () => root.addChild(new Container());
		const ctx = (draw: (c: GraphicsContext) => void) => {
			const c = new GraphicsContext();
			draw(c);
			return c;
		};
		const cross = ctx((c) => c.moveTo(-4, 0).lineTo(4, 0).moveTo(0, -4).lineTo(0, 4).stroke({ width: 1.5, color: C.measurement }));
		const dot = ctx((c) => c.circle(0, 0, 3.5).fill(C.estimate));
		const unit = ctx((c) => c.circle(0, 0, 1).stroke({ width: 1, color: C.estimate, pixelLine: true }));
		const square = ctx((c) => c.rect(-4.5, -4.5, 9, 9).stroke({ width: 1.5, color: C.truth }));
		const ring = ctx((c) => c.circle(0, 0, 9).stroke({ width: 1.5, color: C.truth }));
		const dashed = ctx((c) => {
			for (let k = 0; k < 12; k++) {
				const a = (k / 12) * Math.PI * 2;
				c.moveTo(Math.cos(a) * 10, Math.sin(a) * 10).arc(0, 0, 10, a, a + Math.PI / 10);
			}
			c.stroke({ width: 1.5, color: C.estimate });
		});
		this.#g.grid = root.addChild(new Graphics());
		this.#g.zones = root.addChild(new Graphics());
		this.#zoneText = new Pool(layer(), () => new Text({ text: '', style: { fontFamily: 'IBM Plex Mono', fontSize: 11, fill: C.zone } }));
		this.#g.trails = root.addChild(new Graphics());
		this.#g.links = root.addChild(new Graphics());
		const shared = (parent: Container, c: GraphicsContext) => new Pool(parent, () => new Graphics(c));
		this.#pools.cross = shared(layer(), cross);
		this.#pools.ellipse = shared(layer(), unit);
		this.#pools.dot = shared(layer(), dot);
		this.#pools.square = shared(layer(), square);
		this.#pools.missed = shared(layer(), ring);
		this.#pools.false = shared(layer(), dashed);
		this.#labels = new Pool(layer(), () => new BitmapText({ text: '', style: { fontFamily: 'IBM Plex Mono', fontSize: 10, fill: C.estimate } }));
		this.#ego = root.addChild(new Graphics(ctx((c) => c.poly([11, 0, -6, 7, -2, 0, -6, -7]).fill(C.ego))));
		this.#g.select = root.addChild(new Graphics());
		this.#g.scale = root.addChild(new Graphics());
		this.#scaleText = root.addChild(new Text({ text: '', style: { fontFamily: 'IBM Plex Mono', fontSize: 11, fill: 0x1c2230 } }));

		window.__skeinScene ??= { frames: 0, draws: 0, seq: null, t: null, drawnAt: 0 };
		app.ticker.add(() => {
			window.__skeinScene!.frames++;
			if (this.#dirty) this.#draw();
		});
		this.#ro = new ResizeObserver(() => this.invalidate());
		this.#ro.observe(host);
		this.readTheme();
		this.#bindPointer(app.canvas);
	}

	static async create(host: HTMLElement, geo: RunGeometry): Promise<SceneManager> {
		const pixi = await import('pixi.js');
		const app = new pixi.Application();
		await app.init({ resizeTo: host, antialias: true, preference: 'webgl', autoDensity: true, resolution: window.devicePixelRatio || 1 });
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
		this.#theme = { grid: hex(css.getPropertyValue('--sk-hairline'), 0xe4e0d6), ink: hex(css.getPropertyValue('--sk-ink'), 0x1c2230) };
		this.#scaleText.style.fill = this.#theme.ink;
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
		if (frame.ego) out.push(apply(compose(rigidBetween('world', coords, frame.ego), identity), frame.ego.x, frame.ego.y));
		return out;
	}

	#layout() {
		const f = this.#geo.stateFields;
		const m = this.#geo.measurementFields;
		const ix = Math.max(0, f.indexOf('x'));
		const iy = f.indexOf('y') < 0 ? 1 : f.indexOf('y');
		return { ix, iy, dim: f.length, mx: Math.max(0, m.indexOf('x')), my: m.indexOf('y') < 0 ? 1 : m.indexOf('y') };
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
		for (const g of [this.#g.zones, this.#g.trails, this.#g.links, this.#g.select]) g.clear();
		this.#ego.visible = false;
		if (inp?.frame) {
			const f = inp.frame;
			const tr = this.#toDisplay(f, inp.coords);
			const { ix, iy, dim, mx, my } = this.#layout();
			const on = (l: Layer) => inp.layers.includes(l);
			this.#drawZones(f, inp, sx, sy);
			this.#drawTrails(inp, sx, sy);

			if (on('measurements'))
				(f.measurements ?? []).forEach((m, i) => {
					const [x, y] = apply(tr, m.z[mx], m.z[my]);
					const g = this.#pools.cross.next();
					g.position.set(sx(x), sy(y));
					picks.push({ key: `m#${i}`, kind: 'measurement', index: i, sx: g.x, sy: g.y });
				});

			const est = f.estimates ?? [];
			const truth = f.truth ?? [];
			const estScreen: [number, number][] = [];
			const truthScreen: [number, number][] = [];
			est.forEach((e, i) => {
				const [x, y] = apply(tr, e.x[ix], e.x[iy]);
				estScreen.push([sx(x), sy(y)]);
			});
			truth.forEach((t, i) => {
				const [x, y] = apply(tr, t.x[ix], t.x[iy]);
				truthScreen.push([sx(x), sy(y)]);
				void i;
			});

			if (on('estimates'))
				est.forEach((e, i) => {
					const [px, py] = estScreen[i];
					const alpha = Math.max(0.25, e.r ?? 1);
					const dot = this.#pools.dot.next();
					dot.position.set(px, py);
					dot.alpha = alpha;
					if (e.P && e.P.length === dim * dim) {
						const el = ellipse(e.P[ix * dim + ix], e.P[ix * dim + iy], e.P[iy * dim + iy], inp.sigma);
						if (el) {
							const g = this.#pools.ellipse.next();
							g.position.set(px, py);
							g.scale.set(Math.max(el.rx * z, 0.5), Math.max(el.ry * z, 0.5));
							g.rotation = -(el.angle + tr.rot);
							g.alpha = alpha;
						}
					}
					if (e.id !== undefined || e.label) {
						const t = this.#labels.next();
						const text = e.label ? `${e.id ?? ''} ${e.label}`.trim() : String(e.id);
						if (t.text !== text) t.text = text;
						t.position.set(px + 6, py - 14);
						t.alpha = alpha;
					}
					picks.push({ key: objectKey('e', e.id, i), kind: 'estimate', index: i, sx: px, sy: py });
				});

			if (on('truth'))
				truth.forEach((t, i) => {
					const g = this.#pools.square.next();
					g.position.set(truthScreen[i][0], truthScreen[i][1]);
					picks.push({ key: objectKey('t', t.id, i), kind: 'truth', index: i, sx: g.x, sy: g.y });
				});

			const gospa = inp.evaluation?.gospa;
			if (on('assignment') && gospa) {
				const links = this.#g.links;
				for (const [ti, ej] of gospa.pairs) links.moveTo(truthScreen[ti][0], truthScreen[ti][1]).lineTo(estScreen[ej][0], estScreen[ej][1]);
				links.stroke({ width: 1, color: this.#theme.ink, alpha: 0.55, pixelLine: true });
				gospa.truthToEstimate.forEach((j, i) => {
					if (j < 0) this.#pools.missed.next().position.set(truthScreen[i][0], truthScreen[i][1]);
				});
				gospa.estimateToTruth.forEach((i, j) => {
					if (i < 0) this.#pools.false.next().position.set(estScreen[j][0], estScreen[j][1]);
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
			if (sel) this.#g.select.circle(sel.sx, sel.sy, 13).stroke({ width: 2, color: this.#theme.ink, alpha: 0.8 });
		}
		for (const p of Object.values(this.#pools)) p.end();
		this.#labels.end();
		this.#zoneText.end();
		this.picks = picks;
		const stats = window.__skeinScene!;
		stats.seq = inp?.frame?.seq ?? null;
		stats.t = inp?.frame?.t ?? null;
		stats.drawnAt = performance.now();
	}

	#drawGrid(W: number, H: number, sx: (x: number) => number, sy: (y: number) => number) {
		const g = this.#g.grid;
		g.clear();
		const step = niceLength(this.zoom, 60);
		const x0 = this.cx - W / 2 / this.zoom;
		const y0 = this.cy - H / 2 / this.zoom;
		for (let x = Math.floor(x0 / step) * step; x <= x0 + W / this.zoom; x += step) g.moveTo(sx(x), 0).lineTo(sx(x), H);
		for (let y = Math.floor(y0 / step) * step; y <= y0 + H / this.zoom; y += step) g.moveTo(0, sy(y)).lineTo(W, sy(y));
		g.stroke({ width: 1, color: this.#theme.grid, pixelLine: true });
		const len = niceLength(this.zoom, 100);
		const s = this.#g.scale;
		s.clear();
		s.moveTo(16, H - 18).lineTo(16 + len * this.zoom, H - 18).moveTo(16, H - 23).lineTo(16, H - 13);
		s.moveTo(16 + len * this.zoom, H - 23).lineTo(16 + len * this.zoom, H - 13);
		s.stroke({ width: 1.5, color: this.#theme.ink });
		this.#scaleText.text = `${len >= 1 ? len : len.toPrecision(1)} m`;
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
				const [rx, ry] = [cxz + Math.cos(a) * dx - Math.sin(a) * dy, cyz + Math.sin(a) * dx + Math.cos(a) * dy];
				const [wx, wy] = apply(tr, rx, ry);
				return [sx(wx), sy(wy)] as [number, number];
			});
			g.poly(corners.flat()).fill({ color: C.zone, alpha: 0.12 });
			for (let k = 0; k < 4; k++) dash(g, corners[k], corners[(k + 1) % 4], 6, 4);
			g.stroke({ width: 1.5, color: C.zone });
			const p = probs[zone.name];
			const t = this.#zoneText.next();
			t.text = `${zone.name} · P ${p === undefined ? '—' : p.toFixed(2)}`;
			t.position.set(Math.min(...corners.map((c) => c[0])) + 4, Math.min(...corners.map((c) => c[1])) - 16);
		}
	}

	#drawTrails(inp: SceneInput, sx: (x: number) => number, sy: (y: number) => number) {
		if (!inp.frame || inp.trail.length < 2) return;
		const g = this.#g.trails;
		// trails go through world coordinates frame by frame, then into the current display frame
		const toCurrent = rigidBetween('world', inp.coords, inp.frame.ego);
		const { ix, iy } = this.#layout();
		const stride = Math.max(1, Math.floor(inp.trail.length / 25));
		for (const [kind, on, color] of [
			['estimates', inp.layers.includes('estimates'), C.estimate],
			['truth', inp.layers.includes('truth'), C.truth]
		] as const) {
			if (!on) continue;
			const paths = new Map<string | number, number[]>();
			for (let k = 0; k < inp.trail.length; k += stride) {
				const f = inp.trail[k];
				const tr = compose(toCurrent, rigidBetween(this.#geo.coords, 'world', f.ego));
				for (const o of f[kind] ?? []) {
					if (o.id === undefined) continue;
					const [x, y] = apply(this.#geo.coords === 'ego' && !f.ego ? identity : tr, o.x[ix], o.x[iy]);
					let p = paths.get(o.id);
					if (!p) paths.set(o.id, (p = []));
					p.push(sx(x), sy(y));
				}
			}
			for (const p of paths.values()) {
				if (p.length < 4) continue;
				g.moveTo(p[0], p[1]);
				for (let i = 2; i < p.length; i += 2) g.lineTo(p[i], p[i + 1]);
			}
			g.stroke({ width: 1, color, alpha: 0.5, pixelLine: true });
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
			this.hover = this.pick(e.clientX - r.left, e.clientY - r.top);
		});
		canvas.addEventListener('pointerup', (e) => {
			const start = this.#drag;
			this.#drag = null;
			if (start && Math.hypot(e.clientX - start.x, e.clientY - start.y) < 3) {
				const r = canvas.getBoundingClientRect();
				this.onSelect(this.pick(e.clientX - r.left, e.clientY - r.top)?.key ?? null);
			}
		});
		canvas.addEventListener('pointerleave', () => (this.hover = null));
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
		this.#app.destroy(true, { children: true });
		void this.#pixi;
		void this.#host;
	}
}

function dash(g: Graphics, [x0, y0]: [number, number], [x1, y1]: [number, number], on: number, off: number) {
	const len = Math.hypot(x1 - x0, y1 - y0);
	if (len === 0) return;
	const ux = (x1 - x0) / len;
	const uy = (y1 - y0) / len;
	for (let d = 0; d < len; d += on + off) {
		const e = Math.min(len, d + on);
		g.moveTo(x0 + ux * d, y0 + uy * d).lineTo(x0 + ux * e, y0 + uy * e);
	}
}
