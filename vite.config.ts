import { sveltekit } from '@sveltejs/kit/vite';
import tailwindcss from '@tailwindcss/vite';
import { defineConfig } from 'vitest/config';
import { skeinSockets } from './server-ws/vite-plugin';

export default defineConfig({
	plugins: [tailwindcss(), sveltekit(), skeinSockets()],
	server: { host: '127.0.0.1' },
	test: {
		projects: [
			{
				extends: true,
				test: {
					name: 'unit',
					include: ['src/**/*.test.ts', 'server-ws/**/*.test.ts', 'tools/**/*.test.ts'],
					environment: 'node',
					// the simulator, filter and fuzz tests are CPU-bound: seconds on a busy 2-core machine
					testTimeout: 30_000
				}
			},
			{
				extends: true,
				test: {
					name: 'socket',
					include: ['tests/socket/**/*.test.ts'],
					environment: 'node',
					testTimeout: 60_000,
					hookTimeout: 30_000
				}
			},
			{
				extends: true,
				test: {
					name: 'integration',
					include: ['tests/integration/**/*.test.ts'],
					environment: 'node',
					globalSetup: ['tests/integration/global-setup.ts'],
					fileParallelism: false,
					testTimeout: 60_000,
					hookTimeout: 120_000
				}
			}
		]
	}
});
