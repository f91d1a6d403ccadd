import { defineConfig } from '@playwright/test';

const port = Number(process.env.PORT ?? 4320);

export default defineConfig({
	testDir: 'tests/e2e',
	timeout: 60_000,
	fullyParallel: false,
	workers: 1,
	retries: 0,
	reporter: [['list']],
	use: {
		baseURL: `http://127.0.0.1:${port}`,
		screenshot: 'only-on-failure',
		launchOptions: {
			executablePath: '/usr/bin/chromium',
			args: [
				'--no-sandbox',
				'--disable-gpu',
				'--disable-background-networking',
				'--disable-component-update',
				'--disable-sync',
				'--no-first-run',
				'--disable-quic'
			]
		}
	},
	webServer: {
		command: 'node build',
		url: `http://127.0.0.1:${port}/api/health`,
		reuseExistingServer: false,
		timeout: 60_000,
		env: { ...(process.env as Record<string, string>), PORT: String(port), HOST: '127.0.0.1', KEEP_ALIVE_TIMEOUT: '65' }
	}
});
