// Command-line flags and environment for the bridge process (its one reader of process.env).
import { parseArgs } from 'node:util';
import { existsSync, readFileSync } from 'node:fs';
import { parseEnv } from 'node:util';
import { z } from 'zod';
import { DEFAULT_BRIDGE_PORT, DEFAULT_CLIENTS_PER_USER } from '../src/lib/bridge/protocol';
import { BRIDGE_SECRET_MIN_LENGTH } from '../src/lib/bridge/token';
import { PCM_FORMATS } from './sources/cmd';
import type { BridgeOptions, SourceSpec, TempsSpec } from './server';

export const USAGE = `Usage: npm run bridge -- [--source sim|wav:FILE|cmd:"COMMAND"] [--format s16le|s24le|s32le|f32le]
       [--dc-coupled] [--rate 48000] [--channels 2] [--block 4096] [--host 127.0.0.1] [--port ${DEFAULT_BRIDGE_PORT}]
       [--temps sim|serial:PATH[@BAUD]|none] [--time-scale 1] [--seed N] [--clients-per-user ${DEFAULT_CLIENTS_PER_USER}]

Environment: BRIDGE_SECRET (required, the app's value), BRIDGE_ALLOWED_ORIGINS (comma list;
default from ORIGIN, else http://localhost:3000,http://127.0.0.1:3000), BRIDGE_FULL_SCALE_VOLTS
(wav/cmd sources: peak volts at digital full scale, one value or one per channel; default 1).`;

export class ConfigError extends Error {}

const Flags = z.object({
	source: z.string().default('sim'),
	format: z.enum(PCM_FORMATS).default('s32le'),
	rate: z.coerce.number().int().min(8000).max(768_000).default(48_000),
	channels: z.coerce.number().int().min(1).max(8).default(2),
	block: z.coerce.number().int().min(64).max(65_536).default(4096),
	host: z.string().min(1).default('127.0.0.1'),
	port: z.coerce.number().int().min(0).max(65_535).default(DEFAULT_BRIDGE_PORT),
	temps: z.string().default('sim'),
	'time-scale': z.coerce.number().min(0.01).max(10_000).default(1),
	seed: z.coerce.number().int().min(0).max(0xffffffff).default(1),
	'dc-coupled': z.boolean().default(false),
	'clients-per-user': z.coerce.number().int().min(1).max(32).default(DEFAULT_CLIENTS_PER_USER)
});

function parseSource(s: string, format: (typeof PCM_FORMATS)[number], dcCoupled: boolean): SourceSpec {
	if (dcCoupled && !s.startsWith('cmd:'))
		throw new ConfigError(
			'--dc-coupled is for cmd: sources (the simulator is always DC-coupled, a WAV file never)'
		);
	if (s === 'sim') return { kind: 'sim' };
	if (s.startsWith('wav:') && s.length > 4) return { kind: 'wav', path: s.slice(4) };
	if (s.startsWith('cmd:') && s.length > 4) return { kind: 'cmd', command: s.slice(4), format, dcCoupled };
	throw new ConfigError(`--source must be sim, wav:FILE or cmd:"COMMAND" (got "${s}")`);
}

function parseTemps(s: string): TempsSpec {
	if (s === 'sim') return { kind: 'sim' };
	if (s === 'none') return { kind: 'none' };
	const m = /^serial:(.+?)(?:@(\d+))?$/.exec(s);
	if (m) {
		const baudRate = m[2] ? Number(m[2]) : 9600;
		if (baudRate < 50 || baudRate > 4_000_000) throw new ConfigError(`baud rate ${baudRate} is out of range`);
		return { kind: 'serial', path: m[1], baudRate };
	}
	throw new ConfigError(`--temps must be sim, serial:PATH[@BAUD] or none (got "${s}")`);
}

/** Origins allowed to open the stream: BRIDGE_ALLOWED_ORIGINS, else ORIGIN, else the dev app on port 3000. */
export function allowedOriginsFrom(env: Record<string, string | undefined>): string[] {
	const list = env.BRIDGE_ALLOWED_ORIGINS?.trim()
		? env.BRIDGE_ALLOWED_ORIGINS.split(',')
		: env.ORIGIN?.trim()
			? [env.ORIGIN]
			: ['http://localhost:3000', 'http://127.0.0.1:3000'];
	const out: string[] = [];
	for (const raw of list.map((o) => o.trim()).filter(Boolean)) {
		let u: URL;
		try {
			u = new URL(raw);
		} catch {
			throw new ConfigError(`allowed origin "${raw}" is not a URL`);
		}
		if (u.protocol !== 'http:' && u.protocol !== 'https:')
			throw new ConfigError(`allowed origin "${raw}" must be http(s)`);
		out.push(u.origin);
	}
	return out;
}

/** Read `.env` in the working directory into `env` without overriding what is already set. */
export function loadDotEnv(env: Record<string, string | undefined>, path = '.env'): void {
	if (!existsSync(path)) return;
	const parsed = parseEnv(readFileSync(path, 'utf8')) as Record<string, string>;
	for (const [k, v] of Object.entries(parsed)) if (env[k] === undefined) env[k] = v;
}

export function buildOptions(argv: string[], env: Record<string, string | undefined>): BridgeOptions {
	let values: Record<string, unknown>;
	try {
		({ values } = parseArgs({
			args: argv,
			options: {
				source: { type: 'string' },
				format: { type: 'string' },
				rate: { type: 'string' },
				channels: { type: 'string' },
				block: { type: 'string' },
				host: { type: 'string' },
				port: { type: 'string' },
				temps: { type: 'string' },
				'time-scale': { type: 'string' },
				seed: { type: 'string' },
				'dc-coupled': { type: 'boolean' },
				'clients-per-user': { type: 'string' },
				help: { type: 'boolean' }
			},
			strict: true,
			allowPositionals: false
		}));
	} catch (e) {
		throw new ConfigError((e as Error).message);
	}
	if (values.help) throw new ConfigError('');
	const f = Flags.safeParse(values);
	if (!f.success)
		throw new ConfigError(f.error.issues.map((i) => `--${i.path.join('.')}: ${i.message}`).join('\n'));
	const secret = env.BRIDGE_SECRET;
	if (!secret || secret.length < BRIDGE_SECRET_MIN_LENGTH)
		throw new ConfigError(
			`BRIDGE_SECRET is ${secret ? `shorter than ${BRIDGE_SECRET_MIN_LENGTH} characters` : 'not set'}. ` +
				`Use the same value as the app (npm start writes one into .env), e.g. BRIDGE_SECRET=$(openssl rand -hex 32)`
		);
	let fullScaleVolts: number[] | undefined;
	if (env.BRIDGE_FULL_SCALE_VOLTS) {
		fullScaleVolts = env.BRIDGE_FULL_SCALE_VOLTS.split(',').map((s) => Number(s.trim()));
		if (fullScaleVolts.some((v) => !(v > 0 && v < 10_000)))
			throw new ConfigError('BRIDGE_FULL_SCALE_VOLTS must be positive numbers');
	}
	const v = f.data;
	return {
		host: v.host,
		port: v.port,
		secret,
		allowedOrigins: allowedOriginsFrom(env),
		source: parseSource(v.source, v.format, v['dc-coupled']),
		sampleRateHz: v.rate,
		channels: v.channels,
		blockSize: v.block,
		temps: parseTemps(v.temps),
		timeScale: v['time-scale'],
		seed: v.seed,
		fullScaleVolts,
		tuning: { maxClientsPerUser: v['clients-per-user'] }
	};
}
