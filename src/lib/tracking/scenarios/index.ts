import { brassnettleYard } from './brassnettle-yard';
import { glassmereReach } from './glassmere-reach';
import { lanternfallCrossing } from './lanternfall-crossing';
import type { Scenario, ScenarioInfo } from './types';

export const SCENARIOS: readonly Scenario[] = [
	lanternfallCrossing,
	glassmereReach,
	brassnettleYard
];

export function getScenario(name: string): Scenario {
	const found = SCENARIOS.find((s) => s.name === name);
	if (!found)
		throw new Error(
			`unknown scenario "${name}"; known: ${SCENARIOS.map((s) => s.name).join(', ')}`
		);
	return found;
}

/** Names and descriptions, for pickers and the CLI. */
export function listScenarios(): ScenarioInfo[] {
	return SCENARIOS.map((s) => ({
		name: s.name,
		title: s.title,
		place: s.place,
		description: s.description,
		dt: s.dt,
		durationS: s.durationS,
		sensor: s.sensor.name,
		incidents: s.incidents.map(({ kind, label, fromS, toS }) => ({
			kind,
			label,
			fromS,
			toS
		}))
	}));
}

export type * from './types';
export { brassnettleYard, glassmereReach, lanternfallCrossing };
