// `npm start`: one command that brings up the whole bench on embedded defaults —
// a migrated and seeded SQLite database, the mail catcher, the bridge simulator and the app.
import { spawn, spawnSync } from 'node:child_process';
import { randomBytes } from 'node:crypto';
import { existsSync, readFileSync, appendFileSync, writeFileSync } from 'node:fs';
import { resolve } from 'node:path';

const root = resolve(import.meta.dirname, '..');
process.chdir(root);

// A per-install secret for bridge tokens lives in .env; create it once.
const envFile = resolve(root, '.env');
if (!existsSync(envFile)) writeFileSync(envFile, '# Local settings for Benchlight (not committed)\n');
if (!/^BRIDGE_SECRET=/m.test(readFileSync(envFile, 'utf8'))) {
	appendFileSync(envFile, `BRIDGE_SECRET=${randomBytes(32).toString('hex')}\n`);
	console.log('Wrote a new BRIDGE_SECRET to .env');
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
	// Snapshot uploads carry up to 32 MiB of WAV plus the multipart envelope (adapter-node's default is 512 KB).
	BODY_SIZE_LIMIT: process.env.BODY_SIZE_LIMIT ?? '34M'
};
env.BRIDGE_URL = process.env.BRIDGE_URL ?? `ws://127.0.0.1:${env.BRIDGE_PORT}`;
const appUrl = new URL(env.ORIGIN);
env.BRIDGE_ALLOWED_ORIGINS =
	process.env.BRIDGE_ALLOWED_ORIGINS ??
	[env.ORIGIN, `http://localhost:${appUrl.port || PORT}`, `http://127.0.0.1:${appUrl.port || PORT}`]
		.filter((v, i, a) => a.indexOf(v) === i)
		.join(',');

function step(title, cmd, args) {
	console.log(`▸ ${title}`);
	const r = spawnSync(cmd, args, { stdio: 'inherit', env });
	if (r.status !== 0) {
		console.error(`✗ ${title} failed (exit ${r.status})`);
		process.exit(r.status ?? 1);
	}
}

step('Building the app', 'npx', ['vite', 'build', '--logLevel', 'warn']);
step(`Migrating and seeding ${env.DATABASE_URL}`, 'npx', ['tsx', 'scripts/seed.ts']);

const children = [];
function run(name, cmd, args) {
	const child = spawn(cmd, args, { env, stdio: ['ignore', 'pipe', 'pipe'] });
	const tag = `[${name}]`;
	child.stdout.on('data', (d) => process.stdout.write(prefix(tag, d)));
	child.stderr.on('data', (d) => process.stderr.write(prefix(tag, d)));
	child.on('exit', (code, signal) => {
		if (shuttingDown) return;
		console.error(`${tag} stopped (${signal ?? code}); shutting everything down`);
		shutdown(1);
	});
	children.push(child);
}
function prefix(tag, data) {
	return data
		.toString()
		.split('\n')
		.filter((l, i, a) => l || i < a.length - 1)
		.map((l) => `${tag} ${l}\n`)
		.join('');
}

let shuttingDown = false;
function shutdown(code = 0) {
	if (shuttingDown) return;
	shuttingDown = true;
	for (const c of children) c.kill('SIGTERM');
	setTimeout(() => process.exit(code), 1500).unref();
}
process.on('SIGINT', () => shutdown(0));
process.on('SIGTERM', () => shutdown(0));

run('mail', process.execPath, ['--import', 'tsx', 'scripts/mail-catcher.ts']);
run('bridge', process.execPath, [
	'--import',
	'tsx',
	'bridge/main.ts',
	'--host',
	'127.0.0.1',
	'--port',
	env.BRIDGE_PORT
]);
run('app', 'node', ['build']);

console.log(`
  Benchlight is starting at ${env.ORIGIN}
  bridge simulator  ${env.BRIDGE_URL}
  mail catcher      http://127.0.0.1:${env.MAIL_UI_PORT} (SMTP on 127.0.0.1:${env.SMTP_PORT})
  database          ${env.DATABASE_URL}

  Demo sign-ins (password bench-demo-2026):
    admin@example.com  supervisor@example.com  tech1@example.com  tech2@example.com

  Ctrl-C stops everything.
`);
