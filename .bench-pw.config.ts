// Temporary (bench helper): run tests/e2e/bench.spec.ts against the helper's own dev server and bridge.
import { defineConfig } from '@playwright/test';
export default defineConfig({
	testDir: 'tests/e2e',
	testMatch: /bench\.spec\.ts/,
	workers: 1,
	timeout: 180_000,
	expect: { timeout: 30_000 },
	reporter: [['list']],
	outputDir: '/tmp/bench-pw-results',
	use: {
		baseURL: 'http://127.0.0.1:5300',
		screenshot: 'only-on-failure',
		launchOptions: { executablePath: '/usr/bin/chromium', args: ['--headless', '--no-sandbox', '--disable-gpu', '--disable-quic', '--no-first-run'] }
	}
});
