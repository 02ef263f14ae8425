import { fileURLToPath } from 'node:url';
import { defineConfig } from 'vitest/config';

// The socket tests need no SvelteKit plugin: plain Node, real sockets on 127.0.0.1.
export default defineConfig({
	test: {
		root: fileURLToPath(new URL('../..', import.meta.url)),
		include: ['tests/socket/**/*.test.ts'],
		environment: 'node',
		testTimeout: 60_000,
		hookTimeout: 30_000
	}
});
