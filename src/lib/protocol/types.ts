/**
 * Ingest protocol v1: the shapes rigs send (see docs/protocol.md).
 * An absent set (undefined) means "not reported in this frame"; an empty array means "reported, and empty".
 */

export type ObjectId = string | number;

export interface EgoPose {
	x: number;
	y: number;
	/** radians */
	heading: number;
}

export interface Measurement {
	/** length = run.measurement_fields.length */
	z: number[];
	sensor?: string;
	/** row-major square covariance, length = z.length ** 2 */
	R?: number[];
}

export interface Estimate {
	id?: ObjectId;
	/** length = run.state_fields.length */
	x: number[];
	/** row-major symmetric covariance, length = x.length ** 2 */
	P?: number[];
	/** existence probability in [0, 1] */
	r?: number;
	label?: string;
}

export interface TruthObject {
	id?: ObjectId;
	x: number[];
}

export interface Frame {
	seq: number;
	/** seconds, Unix epoch, device clock */
	t: number;
	ego?: EgoPose;
	measurements?: Measurement[];
	estimates?: Estimate[];
	truth?: TruthObject[];
}

export interface RunSpec {
	name: string;
	state_fields: string[];
	measurement_fields: string[];
	coords?: 'world' | 'ego';
	units?: { length: 'm' };
	tags?: string[];
	notes?: string;
}
