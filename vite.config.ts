import tailwindcss from '@tailwindcss/vite';
import { sveltekit } from '@sveltejs/kit/vite';
import { createRequire } from 'node:module';
import { dirname, join } from 'node:path';
import type { Plugin } from 'vite';
import { defineConfig } from 'vitest/config';

/**
 * `sveltekit-superforms/adapters` re-exports an adapter for every validator library it supports;
 * bundling that barrel drags @vinejs/vine (which imports node:dns) into the browser bundle and
 * typebox and zod 3 into the server bundle (pages of circular-import warnings). Benchlight
 * validates with zod 4 only, so the barrel resolves to the zod 4 adapter alone. Importing any
 * other adapter from it fails the build with a missing-export error, on purpose. Builds only: the
 * dev server's dependency pre-bundling handles the barrel as it is.
 */
function superformsZod4Only(): Plugin {
	const virtualId = '\0benchlight:superforms-adapters';
	const zod4Adapter = join(
		dirname(createRequire(import.meta.url).resolve('sveltekit-superforms/adapters')),
		'zod4.js'
	);
	return {
		name: 'benchlight:superforms-zod4-only',
		enforce: 'pre',
		apply: 'build',
		resolveId(source) {
			return source === 'sveltekit-superforms/adapters' ? virtualId : undefined;
		},
		load(id) {
			if (id !== virtualId) return undefined;
			return `export { zod as zod4, zodClient as zod4Client } from ${JSON.stringify(zod4Adapter)};`;
		}
	};
}

export default defineConfig({
	plugins: [superformsZod4Only(), tailwindcss(), sveltekit()],
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
