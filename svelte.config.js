import adapter from '@sveltejs/adapter-node';
import { vitePreprocess } from '@sveltejs/vite-plugin-svelte';

/** @type {import('@sveltejs/kit').Config} */
const config = {
	preprocess: vitePreprocess(),
	kit: {
		// scripts/build.mjs builds into build/<hash>/ through BENCHLIGHT_BUILD_OUT. Never the bare
		// build/ folder: the adapter empties its output first, which would delete running builds.
		adapter: adapter({ out: process.env.BENCHLIGHT_BUILD_OUT ?? 'build/manual' }),
		// Content Security Policy: SvelteKit adds nonces/hashes for its own inline scripts
		// ('auto': nonces for dynamic pages, hashes for prerendered ones).
		csp: {
			mode: 'auto',
			directives: {
				'default-src': ['self'],
				'script-src': ['self'],
				// Svelte writes style="" attributes during SSR; with 'unsafe-inline' here
				// SvelteKit leaves styles un-hashed, as browsers would ignore it otherwise.
				'style-src': ['self', 'unsafe-inline'],
				'img-src': ['self', 'data:', 'blob:'],
				'font-src': ['self', 'data:'],
				// The bench bridge listens on loopback (ws://127.0.0.1:8787 by default).
				'connect-src': ['self', 'ws://127.0.0.1:*', 'ws://localhost:*'],
				// The analysis worker; blob: for workers built from inline code.
				'worker-src': ['self', 'blob:'],
				'object-src': ['none'],
				'base-uri': ['self'],
				'form-action': ['self'],
				'frame-ancestors': ['none']
			}
		}
	}
};

export default config;
