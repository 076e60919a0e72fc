// Entry point of `npm run bridge`: reads flags and environment, starts the bridge, and
// shuts it down cleanly on Ctrl-C.
import { buildOptions, ConfigError, loadDotEnv, USAGE } from './config';
import { startBridge } from './server';

async function main(): Promise<void> {
	loadDotEnv(process.env);
	let options;
	try {
		options = buildOptions(process.argv.slice(2), process.env);
	} catch (e) {
		if (e instanceof ConfigError) {
			if (e.message) console.error(`bridge: ${e.message}\n`);
			console.error(USAGE);
			process.exit(e.message ? 2 : 0);
		}
		throw e;
	}
	const bridge = await startBridge(options);
	const src = bridge.source;
	console.log(
		`[bridge] ${src.label}: ${src.sampleRateHz} Hz × ${src.channels} ch, ${src.blockSize}-sample frames; ` +
			`temperatures: ${bridge.temps.kind}; time scale ${options.timeScale}×`
	);
	console.log(
		`[bridge] listening on ${bridge.url}/stream (allowed origins: ${options.allowedOrigins.join(', ')})`
	);
	let stopping = false;
	const stop = async (signal: string) => {
		if (stopping) return;
		stopping = true;
		console.log(`[bridge] ${signal}: stopping`);
		await bridge.close();
		process.exit(0);
	};
	process.on('SIGINT', () => void stop('SIGINT'));
	process.on('SIGTERM', () => void stop('SIGTERM'));
}

main().catch((e: unknown) => {
	console.error(`[bridge] cannot start: ${(e as Error).message}`);
	process.exit(1);
});
