import { defineConfig } from '@playwright/test';
import { chromiumLaunchOptions } from './tools/lib/chromium';

const port = Number(process.env.E2E_PORT ?? 4317);

/** Debian's chromium, never a downloaded browser; CPU only (WebGL through SwiftShader). */
export default defineConfig({
	testDir: 'tests/e2e',
	outputDir: 'test-results/e2e',
	fullyParallel: false,
	workers: 1,
	retries: 0,
	timeout: 60_000,
	use: {
		baseURL: `http://127.0.0.1:${port}`,
		viewport: { width: 1280, height: 800 },
		launchOptions: chromiumLaunchOptions,
		trace: 'retain-on-failure',
		screenshot: 'only-on-failure'
	},
	webServer: {
		command: 'node --import tsx tests/e2e/serve.ts',
		url: `http://127.0.0.1:${port}/healthz`,
		timeout: 60_000,
		reuseExistingServer: false,
		env: {
			PORT: String(port),
			HOST: '127.0.0.1',
			NODE_ENV: 'production',
			MAIL_CATCHER_PORT: '0',
			LOG_LEVEL: 'warn'
		}
	}
});
