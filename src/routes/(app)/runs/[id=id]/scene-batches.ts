/**
 * The scene's bulk geometry: every marker of a frame is one point in one draw call, its shape (dot, cross,
 * square, ring, dashed ring) drawn by the fragment shader with a smooth edge; every thin line (ellipses, trails,
 * assignment links) is one segment of one line list. Both are typed arrays written in place each draw and sent
 * to the GPU as one upload: re-tessellating a path per object per frame is what made crowded frames slow,
 * above all on software WebGL.
 */
import type { Buffer as PixiBuffer, Geometry, Mesh, Shader, UniformGroup } from 'pixi.js';

type Pixi = typeof import('pixi.js');

export const Shape = { dot: 0, cross: 1, square: 2, ring: 3, dashedRing: 4 } as const;
/** side of the point sprite (CSS px) that holds each shape with its smooth edge */
const SIDE = [8, 10, 12, 21, 23];

const HEAD = `
uniform mat3 uProjectionMatrix;
uniform mat3 uWorldTransformMatrix;
uniform mat3 uTransformMatrix;
vec4 place(vec2 p) {
	mat3 mvp = uProjectionMatrix * uWorldTransformMatrix * uTransformMatrix;
	return vec4((mvp * vec3(p, 1.0)).xy, 0.0, 1.0);
}`;

const lineVertex = `in vec2 aPosition;
in vec4 aColor;
out vec4 vColor;
${HEAD}
void main() {
	gl_Position = place(aPosition);
	vColor = vec4(aColor.rgb * aColor.a, aColor.a);
}`;
const lineFragment = `in vec4 vColor;
out vec4 finalColor;
void main() { finalColor = vColor; }`;

const markerVertex = `in vec2 aPosition;
in vec4 aColor;
in vec2 aShape;
out vec4 vColor;
out vec2 vShape;
uniform highp float uPixelRatio;
${HEAD}
void main() {
	gl_Position = place(aPosition);
	gl_PointSize = aShape.y * uPixelRatio;
	vColor = aColor;
	vShape = aShape;
}`;
// signed distances in CSS px: dot r 3.5; cross arms 4 × 1.5; square 9 × 9 outline 1.5; ring r 9; dashed ring r 10 in 12 dashes
const markerFragment = `in vec4 vColor;
in vec2 vShape;
out vec4 finalColor;
uniform highp float uPixelRatio;
float box(vec2 p, vec2 b) {
	vec2 d = abs(p) - b;
	return length(max(d, 0.0)) + min(max(d.x, d.y), 0.0);
}
void main() {
	vec2 p = (gl_PointCoord - 0.5) * vShape.y;
	float s = vShape.x;
	float d;
	if (s < 0.5) d = length(p) - 3.5;
	else if (s < 1.5) d = min(box(p, vec2(4.0, 0.75)), box(p, vec2(0.75, 4.0)));
	else if (s < 2.5) d = abs(box(p, vec2(4.5))) - 0.75;
	else if (s < 3.5) d = abs(length(p) - 9.0) - 0.75;
	else {
		// most of the sprite lies off the ring: leave before the arc tangent
		float off = abs(length(p) - 10.0) - 0.75;
		if (off * uPixelRatio > 0.5) discard;
		float seg = 6.2831853 * 10.0 / 12.0;
		float t = fract(atan(p.y, p.x) / 6.2831853 * 12.0) * seg;
		d = max(off, max(-t, t - 0.55 * seg));
	}
	float a = clamp(0.5 - d * uPixelRatio, 0.0, 1.0) * vColor.a;
	if (a <= 0.0) discard;
	finalColor = vec4(vColor.rgb * a, a);
}`;

/** 0xRRGGBB and alpha as the little-endian RGBA bytes of one Uint32 */
export function rgba(color: number, alpha = 1): number {
	return (
		((Math.round(Math.min(1, Math.max(0, alpha)) * 255) << 24) |
			((color & 0xff) << 16) |
			(color & 0xff00) |
			((color >> 16) & 0xff)) >>>
		0
	);
}

/** A growable vertex list drawn with one shader in one call. */
class Batch {
	readonly mesh: Mesh<Geometry, Shader>;
	n = 0;
	#pixi: Pixi;
	#cap = 0;
	#pos = new Float32Array(0);
	#col = new Uint32Array(0);
	#extra = new Float32Array(0);
	#buffers: { pos: PixiBuffer; col: PixiBuffer; extra: PixiBuffer | null };
	#geometry: Geometry;

	constructor(
		pixi: Pixi,
		topology: 'line-list' | 'point-list',
		vertex: string,
		fragment: string,
		uniforms: UniformGroup | null
	) {
		this.#pixi = pixi;
		const { Buffer, BufferUsage, Geometry, GlProgram, Mesh, Shader } = pixi;
		const usage = BufferUsage.VERTEX | BufferUsage.COPY_DST;
		const extra = uniforms !== null;
		this.#buffers = {
			pos: new Buffer({ data: new Float32Array(2), usage }),
			col: new Buffer({ data: new Uint32Array(1), usage }),
			extra: extra ? new Buffer({ data: new Float32Array(2), usage }) : null
		};
		const attributes: Record<string, { buffer: PixiBuffer; format: 'float32x2' | 'unorm8x4' }> = {
			aPosition: { buffer: this.#buffers.pos, format: 'float32x2' },
			aColor: { buffer: this.#buffers.col, format: 'unorm8x4' }
		};
		if (this.#buffers.extra)
			attributes.aShape = { buffer: this.#buffers.extra, format: 'float32x2' };
		this.#geometry = new Geometry({ attributes, indexBuffer: new Uint32Array(1), topology });
		const shader = new Shader({
			glProgram: GlProgram.from({ vertex, fragment }),
			resources: uniforms ? { markerUniforms: uniforms } : {}
		});
		this.mesh = new Mesh<Geometry, Shader>({ geometry: this.#geometry, shader });
		this.#grow(4096);
	}

	#grow(min: number) {
		const cap = Math.max(min, this.#cap * 2);
		const pos = new Float32Array(cap * 2);
		const col = new Uint32Array(cap);
		const extra = new Float32Array(cap * 2);
		pos.set(this.#pos);
		col.set(this.#col);
		extra.set(this.#extra);
		[this.#pos, this.#col, this.#extra, this.#cap] = [pos, col, extra, cap];
		this.#buffers.pos.data = pos;
		this.#buffers.col.data = col;
		if (this.#buffers.extra) this.#buffers.extra.data = extra;
		const index = new Uint32Array(cap);
		for (let i = 0; i < cap; i++) index[i] = i;
		this.#geometry.indexBuffer.data = index;
	}

	protected vertex(x: number, y: number, color: number, e0 = 0, e1 = 0) {
		if (this.n >= this.#cap) this.#grow(this.n + 1);
		const i = this.n++;
		this.#pos[2 * i] = x;
		this.#pos[2 * i + 1] = y;
		this.#col[i] = color;
		this.#extra[2 * i] = e0;
		this.#extra[2 * i + 1] = e1;
	}

	clear() {
		this.n = 0;
	}

	/** sends what this draw wrote (only that many bytes) */
	end() {
		this.#geometry.indexCount = this.n;
		this.mesh.visible = this.n > 0;
		if (!this.n) return;
		this.#buffers.pos.update(this.n * 8);
		this.#buffers.col.update(this.n * 4);
		this.#buffers.extra?.update(this.n * 8);
	}

	destroy() {
		this.mesh.destroy();
		void this.#pixi;
	}
}

export class LineBatch extends Batch {
	constructor(pixi: Pixi) {
		super(pixi, 'line-list', lineVertex, lineFragment, null);
	}
	segment(x0: number, y0: number, x1: number, y1: number, color: number) {
		this.vertex(x0, y0, color);
		this.vertex(x1, y1, color);
	}
	/** an ellipse outline, semi-axes and rotation in screen pixels, with about one segment per 5 px */
	ellipse(cx: number, cy: number, rx: number, ry: number, rotation: number, color: number) {
		const n = Math.min(64, Math.max(8, Math.ceil((2 * Math.PI * Math.max(rx, ry)) / 5)));
		const c = Math.cos(rotation);
		const s = Math.sin(rotation);
		let px = cx + rx * c;
		let py = cy + rx * s;
		for (let k = 1; k <= n; k++) {
			const a = (k / n) * 2 * Math.PI;
			const lx = rx * Math.cos(a);
			const ly = ry * Math.sin(a);
			const x = cx + lx * c - ly * s;
			const y = cy + lx * s + ly * c;
			this.segment(px, py, x, y, color);
			px = x;
			py = y;
		}
	}
}

export class MarkerBatch extends Batch {
	#uniforms: UniformGroup;
	constructor(pixi: Pixi, resolution: number) {
		// not `uResolution`: pixi's global uniforms have a vec2 of that name, which it would sync into this float
		const uniforms = new pixi.UniformGroup({ uPixelRatio: { value: resolution, type: 'f32' } });
		super(pixi, 'point-list', markerVertex, markerFragment, uniforms);
		this.#uniforms = uniforms;
	}
	set resolution(r: number) {
		this.#uniforms.uniforms.uPixelRatio = r;
	}
	mark(shape: (typeof Shape)[keyof typeof Shape], x: number, y: number, color: number) {
		this.vertex(x, y, color, shape, SIDE[shape]);
	}
}
