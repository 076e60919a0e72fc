// End-to-end tests in Debian's Chromium against the built app, a freshly seeded database
// and the bridge simulator (thermal time ×60 so a 60-minute soak lasts a minute).
import { defineConfig } from '@playwright/test';
import { CHROMIUM_ARGS, CHROMIUM_EXECUTABLE } from './tests/chromium';

const APP_PORT = 4173;
const BRIDGE_PORT = 8787;
const appOrigin = `http://127.0.0.1:${APP_PORT}`;

// Shared by the servers below and by specs that mint tokens or start their own bridge.
const e2eEnv = {
	BRIDGE_SECRET: 'e2e-only-bridge-secret-0123456789abcdef',
	BRIDGE_ALLOWED_ORIGINS: appOrigin,
	BRIDGE_URL: `ws://127.0.0.1:${BRIDGE_PORT}`,
	DATABASE_URL: 'data/e2e/benchlight.db',
	ORIGIN: appOrigin,
	HOST: '127.0.0.1',
	PORT: String(APP_PORT),
	SMTP_PORT: '2626',
	BODY_SIZE_LIMIT: '34M'
};
Object.assign(process.env, e2eEnv);

export default defineConfig({
	testDir: 'tests/e2e',
	fullyParallel: false,
	workers: 1,
	retries: 0,
	timeout: 180_000,
	expect: { timeout: 15_000 },
	reporter: [['list']],
	use: {
		baseURL: appOrigin,
		trace: 'retain-on-failure',
		screenshot: 'only-on-failure',
		launchOptions: {
			executablePath: CHROMIUM_EXECUTABLE,
			args: [...CHROMIUM_ARGS, '--autoplay-policy=no-user-gesture-required']
		}
	},
	webServer: [
		{
			command: `node --import tsx bridge/main.ts --host 127.0.0.1 --port ${BRIDGE_PORT} --time-scale 60 --seed 7`,
			port: BRIDGE_PORT,
			env: e2eEnv,
			reuseExistingServer: false,
			timeout: 60_000,
			stdout: 'pipe'
		},
		{
			command: 'bash scripts/e2e-app.sh',
			url: `${appOrigin}/safety`,
			env: e2eEnv,
			reuseExistingServer: false,
			timeout: 240_000,
			stdout: 'pipe'
		}
	]
});
