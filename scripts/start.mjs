// `npm start`: one command that brings up the whole bench on embedded defaults — a migrated and
// seeded SQLite database, the mail catcher, the bridge simulator and the app — and keeps them up.
import { spawn } from 'node:child_process';
import { randomBytes } from 'node:crypto';
import { appendFileSync, existsSync, readFileSync, writeFileSync } from 'node:fs';
import { relative, resolve } from 'node:path';
import Database from 'better-sqlite3';
import { ensureBuild, releaseUse } from './build.mjs';
import { checkPorts, waitForHttp } from './ports.mjs';
import { supervise } from './supervise.mjs';

const root = resolve(import.meta.dirname, '..');
process.chdir(root);

/** Demo sign-ins the seed creates (scripts/seed.ts); listed once, in the banner. */
const DEMO_EMAILS = ['admin@example.com', 'supervisor@example.com', 'tech1@example.com', 'tech2@example.com'];
const DEMO_PASSWORD = 'bench-demo-2026';

/** Something went wrong before the bench could start: one line, no stack trace, exit 1. */
class StartError extends Error {}

// A per-install secret for bridge tokens lives in .env; create it once.
const envFile = resolve(root, '.env');
if (!existsSync(envFile))
	writeFileSync(envFile, '# Local settings for Benchlight (not committed)\n', { mode: 0o600 });
if (!/^BRIDGE_SECRET=/m.test(readFileSync(envFile, 'utf8'))) {
	appendFileSync(envFile, `BRIDGE_SECRET=${randomBytes(32).toString('hex')}\n`);
	console.log('Wrote a new BRIDGE_SECRET to .env');
}
// The same for the secret the local payment service signs its webhook events with.
if (!/^PAYMENTS_WEBHOOK_SECRET=/m.test(readFileSync(envFile, 'utf8'))) {
	appendFileSync(envFile, `PAYMENTS_WEBHOOK_SECRET=whsec_${randomBytes(24).toString('hex')}\n`);
	console.log('Wrote a new PAYMENTS_WEBHOOK_SECRET to .env');
}
process.loadEnvFile(envFile);

const PORT = process.env.PORT ?? '3000';
const env = {
	...process.env,
	PORT,
	HOST: process.env.HOST ?? '127.0.0.1',
	ORIGIN: process.env.ORIGIN ?? `http://localhost:${PORT}`,
	DATABASE_URL: process.env.DATABASE_URL ?? 'data/benchlight.db',
	BRIDGE_PORT: process.env.BRIDGE_PORT ?? '8787',
	SMTP_PORT: process.env.SMTP_PORT ?? '2525',
	MAIL_UI_PORT: process.env.MAIL_UI_PORT ?? '8025',
	PAYMENTS_PORT: process.env.PAYMENTS_PORT ?? '8790',
	// Snapshot uploads carry up to 32 MiB of WAV, job files up to the shop's per-file limit (at most
	// 200 MiB) plus the multipart envelope (adapter-node's default is 512 KB). Routes cap their own bodies.
	BODY_SIZE_LIMIT: process.env.BODY_SIZE_LIMIT ?? '210M'
};
env.BRIDGE_URL = process.env.BRIDGE_URL ?? `ws://127.0.0.1:${env.BRIDGE_PORT}`;
// The local test payment service (scripts/payments-fake.ts) stands in for the hosted checkout.
env.PAYMENTS_URL = process.env.PAYMENTS_URL ?? `http://127.0.0.1:${env.PAYMENTS_PORT}`;
env.PAYMENTS_WEBHOOK_URL =
	process.env.PAYMENTS_WEBHOOK_URL ?? `http://127.0.0.1:${PORT}/api/payments/webhook`;

let appUrl;
try {
	appUrl = new URL(env.ORIGIN);
} catch {
	fail(new StartError(`ORIGIN=${env.ORIGIN} is not a URL (e.g. ORIGIN=http://localhost:${PORT})`));
}
env.BRIDGE_ALLOWED_ORIGINS =
	process.env.BRIDGE_ALLOWED_ORIGINS ??
	[env.ORIGIN, `http://localhost:${appUrl.port || PORT}`, `http://127.0.0.1:${appUrl.port || PORT}`]
		.filter((v, i, a) => a.indexOf(v) === i)
		.join(',');

/** @param {unknown} e */
function fail(e) {
	console.error(`✗ ${e instanceof Error ? e.message : String(e)}`);
	if (!(e instanceof StartError) && e instanceof Error && process.env.DEBUG) console.error(e.stack);
	process.exit(1);
}

/** Tags each line with the process it came from (once: the bridge tags its own lines). */
function prefix(tag, data) {
	return data
		.toString()
		.split('\n')
		.filter((l, i, a) => l || i < a.length - 1)
		.map((l) => (l.startsWith(`${tag} `) ? `${l}\n` : `${tag} ${l}\n`))
		.join('');
}

/** Migrates and seeds; the seed's own list of sign-ins is left out (the banner lists them). */
function seed() {
	return new Promise((resolvePromise, reject) => {
		const child = spawn(process.execPath, ['--import', 'tsx', 'scripts/seed.ts'], {
			env,
			stdio: ['ignore', 'pipe', 'inherit']
		});
		let out = '';
		child.stdout.on('data', (d) => (out += d));
		child.on('error', reject);
		child.on('close', (code) => {
			let inSignIns = false;
			for (const line of out.split('\n')) {
				if (/^Demo sign-ins/.test(line)) inSignIns = true;
				else if (inSignIns && /^\s/.test(line)) continue;
				else inSignIns = false;
				if (!inSignIns && line) console.log(`  ${line}`);
			}
			if (code === 0) resolvePromise(undefined);
			else reject(new StartError(`migrating and seeding ${env.DATABASE_URL} failed (exit ${code})`));
		});
	});
}

/** The demo sign-ins present in the database (none once an admin has removed them). */
function demoSignIns() {
	try {
		const db = new Database(env.DATABASE_URL, { readonly: true, fileMustExist: true });
		try {
			const rows = db
				.prepare(`SELECT email FROM users WHERE email IN (${DEMO_EMAILS.map(() => '?').join(',')})`)
				.all(...DEMO_EMAILS);
			const present = new Set(rows.map((r) => /** @type {{ email: string }} */ (r).email));
			return DEMO_EMAILS.filter((e) => present.has(e));
		} finally {
			db.close();
		}
	} catch {
		return [];
	}
}

/** @type {{ name: string, handle: ReturnType<typeof supervise> }[]} */
const services = [];
let buildDir = '';
let shuttingDown = false;

async function shutdown(code = 0) {
	if (shuttingDown) {
		// A second Ctrl-C: do not wait for anyone.
		for (const s of services) s.handle.child?.kill('SIGKILL');
		process.exit(code || 130);
	}
	shuttingDown = true;
	console.log('\nStopping the app, bridge, mail catcher and test payment service…');
	await Promise.all(services.map((s) => s.handle.stop({ killAfterMs: 6000 })));
	if (buildDir) releaseUse(buildDir);
	process.exit(code);
}
process.on('SIGINT', () => void shutdown(0));
process.on('SIGTERM', () => void shutdown(0));

function run(name, args) {
	const tag = `[${name}]`;
	const handle = supervise({
		name,
		command: process.execPath,
		args,
		spawnOptions: { env, stdio: ['ignore', 'pipe', 'pipe'] },
		log: (line) => console.error(line),
		onStart(child) {
			child.stdout?.on('data', (d) => process.stdout.write(prefix(tag, d)));
			child.stderr?.on('data', (d) => process.stderr.write(prefix(tag, d)));
		}
	});
	services.push({ name, handle });
	return handle;
}

async function main() {
	const problems = await checkPorts([
		{ label: 'app', variable: 'PORT', value: env.PORT, host: env.HOST },
		{ label: 'bridge simulator', variable: 'BRIDGE_PORT', value: env.BRIDGE_PORT, host: '127.0.0.1' },
		{ label: 'mail catcher SMTP', variable: 'SMTP_PORT', value: env.SMTP_PORT, host: '127.0.0.1' },
		{ label: 'mail catcher list', variable: 'MAIL_UI_PORT', value: env.MAIL_UI_PORT, host: '127.0.0.1' },
		{ label: 'test payment service', variable: 'PAYMENTS_PORT', value: env.PAYMENTS_PORT, host: '127.0.0.1' }
	]);
	if (problems.length > 0) {
		for (const p of problems) console.error(`✗ ${p.line}`);
		process.exit(1);
	}

	const t0 = performance.now();
	console.log('▸ Checking the build');
	const build = await ensureBuild({ root, log: (l) => console.log(l ? `  ${l}` : '') });
	buildDir = build.dir;
	const took = ((performance.now() - t0) / 1000).toFixed(1);
	console.log(
		build.built
			? `  built ${relative(root, build.dir)} in ${took} s${build.pruned.length ? ` (removed unused ${build.pruned.join(', ')})` : ''}`
			: `  ${relative(root, build.dir)} is up to date (sources unchanged)`
	);

	console.log(`▸ Migrating and seeding ${env.DATABASE_URL}`);
	await seed();
	if (shuttingDown) return;

	run('mail', ['--import', 'tsx', 'scripts/mail-catcher.ts']);
	run('payments', ['--import', 'tsx', 'scripts/payments-fake.ts']);
	run('bridge', ['--import', 'tsx', 'bridge/main.ts', '--host', '127.0.0.1', '--port', env.BRIDGE_PORT]);
	run('app', ['scripts/serve.mjs', build.dir]);

	const probeHost = ['0.0.0.0', '::', ''].includes(env.HOST) ? '127.0.0.1' : env.HOST;
	const probe = `http://${probeHost.includes(':') ? `[${probeHost}]` : probeHost}:${env.PORT}/`;
	while (!(await waitForHttp(probe, { timeoutMs: 60_000, stillWanted: () => !shuttingDown }))) {
		if (shuttingDown) return;
		console.error(`  the app has not answered at ${probe} for a minute; still waiting (Ctrl-C stops)`);
	}
	if (shuttingDown) return;

	const signIns = demoSignIns();
	console.log(`
  Benchlight is running at ${env.ORIGIN}
  bridge simulator  ${env.BRIDGE_URL}
  mail catcher      http://127.0.0.1:${env.MAIL_UI_PORT} (SMTP on 127.0.0.1:${env.SMTP_PORT})
  test payments     ${env.PAYMENTS_URL} (a local stand-in: no money moves)
  database          ${env.DATABASE_URL}
${
	signIns.length
		? `
  Demo sign-ins (password ${DEMO_PASSWORD}):
    ${signIns.join('  ')}
`
		: ''
}
  A process that stops is restarted; Ctrl-C stops everything.
`);
}

main().catch(async (e) => {
	if (services.length) await Promise.all(services.map((s) => s.handle.stop({ killAfterMs: 3000 })));
	if (buildDir) releaseUse(buildDir);
	fail(e);
});
