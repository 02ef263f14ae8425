import type { TestProject } from 'vitest/node';
import { startApp, type RunningApp } from '../support/app';

let app: RunningApp | undefined;

/** One built app for the integration suite, on its own port, against the test database. */
export async function setup(project: TestProject) {
	app = await startApp();
	project.provide('appUrl', app.url);
}

export async function teardown() {
	await app?.stop();
}

declare module 'vitest' {
	export interface ProvidedContext {
		appUrl: string;
	}
}
