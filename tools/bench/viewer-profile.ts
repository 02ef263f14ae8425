/**
 * A main-thread CPU profile for the viewer benchmark, through the Chrome DevTools protocol: self time per
 * function and per script. The app is minified, so each function is shown with the first characters of its
 * source to tell it apart.
 */
import type { Page } from '@playwright/test';

interface CallFrame {
	functionName: string;
	url: string;
	lineNumber: number;
	columnNumber: number;
}
interface ProfileNode {
	id: number;
	callFrame: CallFrame;
}
export interface CpuProfile {
	nodes: ProfileNode[];
	samples: number[];
	timeDeltas: number[];
	sources: Map<string, string[]>;
}

export async function startProfile(page: Page) {
	const cdp = await page.context().newCDPSession(page);
	await cdp.send('Profiler.enable');
	await cdp.send('Profiler.setSamplingInterval', { interval: 200 });
	await cdp.send('Profiler.start');
	return {
		async stop(): Promise<CpuProfile> {
			const { profile } = (await cdp.send('Profiler.stop')) as unknown as {
				profile: Omit<CpuProfile, 'sources'>;
			};
			await cdp.detach();
			const sources = new Map<string, string[]>();
			for (const url of new Set(profile.nodes.map((n) => n.callFrame.url))) {
				if (!url.startsWith('http')) continue;
				const res = await page.request.get(url).catch(() => null);
				if (res?.ok()) sources.set(url, (await res.text()).split('\n'));
			}
			return { ...profile, sources };
		}
	};
}

const short = (url: string) =>
	url ? url.replace(/^https?:\/\/[^/]+/, '').replace(/^\/_app\/immutable\//, '') : '(native)';

export function profileSummary(p: CpuProfile, wallMs: number, top = 22): string {
	const byNode = new Map<number, number>();
	for (let i = 0; i < p.samples.length; i++)
		byNode.set(p.samples[i], (byNode.get(p.samples[i]) ?? 0) + (p.timeDeltas[i] ?? 0) / 1000);
	const nodes = new Map(p.nodes.map((n) => [n.id, n]));
	const byFn = new Map<string, { ms: number; f: CallFrame }>();
	const byScript = new Map<string, number>();
	let total = 0;
	for (const [id, ms] of byNode) {
		const f = nodes.get(id)!.callFrame;
		total += ms;
		const key = `${f.functionName}|${f.url}|${f.lineNumber}|${f.columnNumber}`;
		const e = byFn.get(key) ?? { ms: 0, f };
		e.ms += ms;
		byFn.set(key, e);
		const script = f.url ? short(f.url) : f.functionName || '(anonymous)';
		byScript.set(script, (byScript.get(script) ?? 0) + ms);
	}
	const pct = (ms: number) => `${((ms / wallMs) * 100).toFixed(1).padStart(5)} %`;
	const lines = [
		`\nmain-thread profile over ${(wallMs / 1000).toFixed(1)} s (${total.toFixed(0)} ms sampled); share of wall time`,
		'  by script:'
	];
	for (const [s, ms] of [...byScript].sort((a, b) => b[1] - a[1]).slice(0, 10))
		lines.push(`    ${pct(ms)}  ${s}`);
	lines.push('  by function (self time):');
	for (const { ms, f } of [...byFn.values()].sort((a, b) => b.ms - a.ms).slice(0, top)) {
		const src =
			p.sources
				.get(f.url)
				?.[f.lineNumber]?.slice(f.columnNumber, f.columnNumber + 60)
				.replace(/\s+/g, ' ') ?? '';
		lines.push(
			`    ${pct(ms)}  ${(f.functionName || '(anonymous)').slice(0, 28).padEnd(28)} ${short(f.url)}:${f.lineNumber + 1}:${f.columnNumber}  ${src}`
		);
	}
	return lines.join('\n');
}
