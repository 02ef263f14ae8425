/**
 * A simulated rig: scenario → sensor → GM-PHD filter, streamed through ingest protocol v1 with the
 * rig client (window, acks, reconnect and resume included), paced like a real rig or as fast as acks allow.
 */
import { SkeinRigClient } from '../../src/lib/protocol/client';
import {
	MEASUREMENT_FIELDS,
	STATE_FIELDS,
	getScenario,
	simulateFrom
} from '../../src/lib/tracking';

export interface SimulatedRigOptions {
	/** ws://host:port/ingest/v1 */
	url: string;
	key: string;
	scenario: string;
	seed: number;
	/** 1 = real time; 4 = four times faster; 0 = as fast as the server acknowledges */
	speed: number;
	durationS?: number;
	/** device clock of frame 0 (s since the Unix epoch); default now */
	startEpoch?: number;
	clientRunId?: string;
	runName?: string;
	tags?: string[];
	notes?: string;
	incidents?: boolean;
	signal?: AbortSignal;
	log?: (line: string) => void;
}

export interface SimulatedRigResult {
	runId: string;
	frames: number;
	aborted: boolean;
}

const sleep = (ms: number, signal?: AbortSignal) =>
	new Promise<void>((resolve) => {
		if (ms <= 0 || signal?.aborted) return resolve();
		const wake = () => {
			clearTimeout(t);
			signal?.removeEventListener('abort', wake);
			resolve();
		};
		const t = setTimeout(wake, ms);
		signal?.addEventListener('abort', wake, { once: true });
	});

export async function runSimulatedRig(o: SimulatedRigOptions): Promise<SimulatedRigResult> {
	const scenario = getScenario(o.scenario);
	const startEpoch = o.startEpoch ?? Math.round(Date.now()) / 1000;
	const clientRunId =
		o.clientRunId ?? `sim-${o.scenario}-${o.seed}-${Math.round(startEpoch * 1000)}`;
	const log = o.log ?? (() => {});
	const client = new SkeinRigClient({
		url: o.url,
		key: o.key,
		clientRunId,
		backoff: { minMs: 200, maxMs: 5000 },
		run: {
			name: o.runName ?? `${scenario.title} · seed ${o.seed}`,
			state_fields: [...STATE_FIELDS],
			measurement_fields: [...MEASUREMENT_FIELDS],
			coords: 'world',
			units: { length: 'm' },
			tags: o.tags ?? ['simulated', o.scenario],
			notes: o.notes ?? scenario.description
		}
	});
	client.on((e) => {
		if (e.type === 'disconnected')
			log(`disconnected (${e.code} ${e.reason}); retrying in ${e.retryInMs} ms`);
		else if (e.type === 'opened' && e.reconnect) log(`resumed run ${e.runId} at seq ${e.nextSeq}`);
		else if (e.type === 'server-error') log(`server: ${e.code} ${e.message}`);
	});
	const { runId, nextSeq } = await client.start();
	log(`streaming run ${runId} (${o.scenario}, seed ${o.seed}) from seq ${nextSeq}`);
	const wallStart = performance.now();
	const window = 512;
	for (const step of simulateFrom(
		o.scenario,
		{ seed: o.seed, durationS: o.durationS, startEpoch, incidents: o.incidents },
		nextSeq
	)) {
		if (o.signal?.aborted) break;
		if (o.speed > 0) {
			const due = wallStart + ((step.index - nextSeq) * scenario.dt * 1000) / o.speed;
			await sleep(due - performance.now(), o.signal);
		} else if (client.stats.queued > window) {
			// as fast as possible, but without queueing the whole run in memory
			while (client.stats.queued > window / 2 && !o.signal?.aborted) await sleep(2);
		}
		const { seq: _seq, ...frame } = step.frame;
		client.send(frame);
	}
	const closed = await client.close();
	return { runId: closed.run_id, frames: closed.frames, aborted: o.signal?.aborted ?? false };
}
