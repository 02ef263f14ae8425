/**
 * TEST FIXTURE: an in-memory IngestStore for the socket tests. Not for production use.
 * It checks the contract the socket logic promises the real store (contiguous batches,
 * no seq committed twice) and records every breach in `violations`.
 */
import type { IngestRunState, RunSpec } from '../../src/lib/protocol/types';
import type {
	FrameToStore,
	IngestStore,
	KeyResolution,
	OpenRunRequest,
	OpenRunResult,
	QuarantinedToStore
} from '../../src/lib/server/ingest/contract';

interface MemoryKey {
	keyId: string;
	rigId: string;
	revoked: boolean;
	expiresAt: number | null;
	lastUsed: number | null;
}

export interface MemoryRun {
	runId: string;
	rigId: string;
	clientRunId: string | null;
	spec: RunSpec;
	state: IngestRunState;
	frames: Map<number, FrameToStore>;
	quarantine: Map<number, QuarantinedToStore>;
	stateHistory: IngestRunState[];
}

export class MemoryIngestStore implements IngestStore {
	readonly keys = new Map<string, MemoryKey>();
	readonly runs = new Map<string, MemoryRun>();
	readonly violations: string[] = [];
	commits = 0;
	/** each commit waits this long before it is "durable" */
	commitDelayMs = 0;
	/** the next n commits fail */
	failCommits = 0;
	#nextRun = 1;

	addKey(
		key: string,
		keyId: string,
		rigId: string,
		opts: { revoked?: boolean; expiresAt?: number } = {}
	): void {
		this.keys.set(key, {
			keyId,
			rigId,
			revoked: opts.revoked ?? false,
			expiresAt: opts.expiresAt ?? null,
			lastUsed: null
		});
	}

	async resolveKey(key: string): Promise<KeyResolution> {
		const k = this.keys.get(key);
		if (k === undefined) return { ok: false, reason: 'unknown feed key' };
		if (k.revoked) return { ok: false, reason: 'feed key revoked' };
		if (k.expiresAt !== null && k.expiresAt <= Date.now())
			return { ok: false, reason: 'feed key expired' };
		return { ok: true, rig: { rigId: k.rigId, keyId: k.keyId } };
	}

	async openRun({ rig, clientRunId, spec }: OpenRunRequest): Promise<OpenRunResult> {
		if (clientRunId !== null) {
			for (const run of this.runs.values()) {
				if (run.rigId !== rig.rigId || run.clientRunId !== clientRunId) continue;
				const seqs = [...run.frames.keys(), ...run.quarantine.keys()];
				const next = seqs.length === 0 ? 0 : Math.max(...seqs) + 1;
				const stored = [...run.frames.values()].sort((a, b) => a.seq - b.seq);
				return {
					ok: true,
					runId: run.runId,
					resumed: true,
					spec: run.spec,
					nextSeq: next,
					lastT: stored.length === 0 ? null : stored[stored.length - 1].t,
					frames: run.frames.size,
					state: run.state
				};
			}
		}
		const runId = `run-${this.#nextRun++}`;
		this.runs.set(runId, {
			runId,
			rigId: rig.rigId,
			clientRunId,
			spec,
			state: 'live',
			frames: new Map(),
			quarantine: new Map(),
			stateHistory: ['live']
		});
		return {
			ok: true,
			runId,
			resumed: false,
			spec,
			nextSeq: 0,
			lastT: null,
			frames: 0,
			state: 'live'
		};
	}

	async commitFrames(
		runId: string,
		frames: FrameToStore[],
		quarantined: QuarantinedToStore[]
	): Promise<void> {
		if (this.commitDelayMs > 0) await new Promise((r) => setTimeout(r, this.commitDelayMs));
		if (this.failCommits > 0) {
			this.failCommits--;
			throw new Error('simulated storage failure');
		}
		const run = this.runs.get(runId);
		if (run === undefined) throw new Error(`no run ${runId}`);
		this.commits++;
		const seqs = [...frames.map((f) => f.seq), ...quarantined.map((q) => q.seq)].sort(
			(a, b) => a - b
		);
		const stored = [...run.frames.keys(), ...run.quarantine.keys()];
		const expected = stored.length === 0 ? 0 : Math.max(...stored) + 1;
		for (let i = 0; i < seqs.length; i++) {
			if (seqs[i] !== expected + i) {
				this.violations.push(
					`run ${runId}: batch ${seqs.join(',')} does not continue at ${expected}`
				);
				break;
			}
		}
		for (const f of frames) {
			if (run.frames.has(f.seq) || run.quarantine.has(f.seq))
				this.violations.push(`seq ${f.seq} committed twice`);
			else run.frames.set(f.seq, f);
		}
		for (const q of quarantined) {
			if (run.frames.has(q.seq) || run.quarantine.has(q.seq))
				this.violations.push(`seq ${q.seq} committed twice`);
			else run.quarantine.set(q.seq, q);
		}
	}

	async setRunState(runId: string, state: IngestRunState): Promise<void> {
		const run = this.runs.get(runId);
		if (run === undefined) throw new Error(`no run ${runId}`);
		run.state = state;
		run.stateHistory.push(state);
	}

	async touchKey(keyId: string): Promise<void> {
		for (const k of this.keys.values()) if (k.keyId === keyId) k.lastUsed = Date.now();
	}

	run(runId: string): MemoryRun {
		const run = this.runs.get(runId);
		if (run === undefined) throw new Error(`no run ${runId}`);
		return run;
	}

	/** Stored frame seqs in order. */
	seqs(runId: string): number[] {
		return [...this.run(runId).frames.keys()].sort((a, b) => a - b);
	}
}
