// End-to-end tests in Debian's Chromium against the built app, a freshly seeded database
// and the bridge simulator (thermal time ×60 so a 60-minute soak lasts a minute).
import { defineConfig } from '@playwright/test';
import { spawnSync } from 'node:child_process';
import { CHROMIUM_ARGS, CHROMIUM_EXECUTABLE } from './tests/chromium';

/**
 * Free loopback ports, picked once by the runner and handed to its worker processes through the
 * environment (each worker evaluates this file again and must see the same ports). Picking them
 * means `npm test` runs beside `npm start` or a second checkout without a clash.
 */
function freePorts(count: number): number[] {
	const script = `const net=require('net');const s=[];let n=${count};
for(let i=0;i<${count};i++){const v=net.createServer();s.push(v);v.listen(0,'127.0.0.1',()=>{if(--n===0){console.log(s.map(x=>x.address().port).join(','));s.forEach(x=>x.close());}});}`;
	const r = spawnSync(process.execPath, ['-e', script], { encoding: 'utf8' });
	const ports = r.stdout.trim().split(',').map(Number);
	if (r.status !== 0 || ports.length !== count || !ports.every((p) => p > 0))
		throw new Error(`could not pick free ports for the e2e servers: ${r.stderr}`);
	return ports;
}
if (!process.env.E2E_PORTS) process.env.E2E_PORTS = freePorts(5).join(',');
const [APP_PORT, BRIDGE_PORT, SMTP_PORT, SOAK_BRIDGE_PORT, PAYMENTS_PORT] =
	process.env.E2E_PORTS.split(',').map(Number);
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
	SMTP_PORT: String(SMTP_PORT),
	/** A second bridge the soak spec starts and restarts itself. */
	E2E_SOAK_BRIDGE_PORT: String(SOAK_BRIDGE_PORT),
	BODY_SIZE_LIMIT: '210M',
	/** The local test payment service the app's SDK client talks to, and its webhook secret. */
	PAYMENTS_URL: `http://127.0.0.1:${PAYMENTS_PORT}`,
	PAYMENTS_WEBHOOK_URL: `${appOrigin}/api/payments/webhook`,
	PAYMENTS_WEBHOOK_SECRET: 'whsec_e2e_only_payments_secret_0123456789'
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
			command: 'node --import tsx scripts/payments-fake.ts',
			port: PAYMENTS_PORT,
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
