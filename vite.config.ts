import tailwindcss from '@tailwindcss/vite';
import { sveltekit } from '@sveltejs/kit/vite';
import { defineConfig } from 'vitest/config';

export default defineConfig({
	plugins: [tailwindcss(), sveltekit()],
	worker: { format: 'es' },
	test: {
		include: ['src/**/*.test.ts', 'bridge/**/*.test.ts', 'tests/unit/**/*.test.ts', 'scripts/**/*.test.ts'],
		environment: 'node',
		setupFiles: ['tests/unit/setup-env.ts'],
		testTimeout: 30_000,
		hookTimeout: 30_000,
		pool: 'forks'
	}
});
