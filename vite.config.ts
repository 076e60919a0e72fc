import tailwindcss from '@tailwindcss/vite';
import { sveltekit } from '@sveltejs/kit/vite';
import { build as esbuild } from 'esbuild';
import { resolve } from 'node:path';
import { fileURLToPath } from 'node:url';
import type { Plugin } from 'vite';
import { defineConfig } from 'vitest/config';

/**
 * `import source from './x.worker.ts?node-worker'` gives the server a worker_threads entry as one
 * self-contained CommonJS script (its `$lib` imports and packages bundled by esbuild; node:*
 * built-ins left to Node), started with `new Worker(source, { eval: true })`. The script travels
 * inside the importing module as a string, so it works the same under `vite dev`, vitest, and the
 * adapter-node build (whose server re-bundle would drop a separate worker file).
 */
function nodeWorker(): Plugin {
	const suffix = '?node-worker';
	const prefix = '\0node-worker:';
	const lib = fileURLToPath(new URL('./src/lib', import.meta.url));
	return {
		name: 'benchlight:node-worker',
		enforce: 'pre',
		async resolveId(source, importer) {
			if (!source.endsWith(suffix)) return undefined;
			const entry = await this.resolve(source.slice(0, -suffix.length), importer, { skipSelf: true });
			if (!entry) this.error(`node-worker: cannot find ${source} from ${importer}`);
			return prefix + entry.id;
		},
		async load(id) {
			if (!id.startsWith(prefix)) return undefined;
			const entry = id.slice(prefix.length);
			const out = await esbuild({
				entryPoints: [entry],
				bundle: true,
				write: false,
				platform: 'node',
				format: 'cjs',
				target: 'node20',
				alias: { $lib: lib },
				metafile: true,
				logLevel: 'silent',
				legalComments: 'none'
			});
			// A change to anything the worker imports rebuilds the script.
			for (const input of Object.keys(out.metafile.inputs)) this.addWatchFile(resolve(input));
			return `export default ${JSON.stringify(out.outputFiles[0].text)};`;
		}
	};
}

export default defineConfig({
	plugins: [nodeWorker(), tailwindcss(), sveltekit()],
	worker: { format: 'es' },
	build: {
		// The per-plugin timing report is for profiling the build, not for every `npm start`.
		rolldownOptions: { checks: { pluginTimings: false } }
	},
	test: {
		include: ['src/**/*.test.ts', 'bridge/**/*.test.ts', 'tests/unit/**/*.test.ts', 'scripts/**/*.test.ts'],
		environment: 'node',
		setupFiles: ['tests/unit/setup-env.ts'],
		testTimeout: 30_000,
		hookTimeout: 30_000,
		pool: 'forks'
	}
});
