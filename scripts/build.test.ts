// Content-addressed builds: what changes the build's name, and which builds a prune removes.
import { afterAll, describe, expect, it } from 'vitest';
import { spawnSync } from 'node:child_process';
import { existsSync, mkdirSync, mkdtempSync, readdirSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { inputsHash, pruneBuilds, registerUse } from './build.mjs';

const dir = mkdtempSync(join(tmpdir(), 'benchlight-build-test-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

/** The id of a process that has exited. */
function deadPid(): number {
	const r = spawnSync(process.execPath, ['-e', 'console.log(process.pid)'], { encoding: 'utf8' });
	return Number(r.stdout.trim());
}

describe('inputsHash', () => {
	const root = join(dir, 'checkout');
	mkdirSync(join(root, 'src', 'lib'), { recursive: true });
	mkdirSync(join(root, 'static'), { recursive: true });
	writeFileSync(join(root, 'src', 'lib', 'a.ts'), 'export const a = 1;\n');
	writeFileSync(join(root, 'static', 'robots.txt'), 'User-agent: *\n');
	writeFileSync(join(root, 'svelte.config.js'), 'export default {};\n');

	it('is the same for the same sources, and ignores tests', () => {
		const before = inputsHash(root);
		expect(before).toMatch(/^[0-9a-f]{16}$/);
		writeFileSync(join(root, 'src', 'lib', 'a.test.ts'), 'test\n');
		expect(inputsHash(root)).toBe(before);
		writeFileSync(join(root, 'README.md'), 'not a build input\n');
		expect(inputsHash(root)).toBe(before);
	});

	it('changes when a source, a static file or the config changes', () => {
		const seen = new Set([inputsHash(root)]);
		writeFileSync(join(root, 'src', 'lib', 'a.ts'), 'export const a = 2;\n');
		seen.add(inputsHash(root));
		writeFileSync(join(root, 'static', 'robots.txt'), 'User-agent: *\nDisallow: /\n');
		seen.add(inputsHash(root));
		writeFileSync(join(root, 'svelte.config.js'), 'export default { kit: {} };\n');
		seen.add(inputsHash(root));
		// A file moved keeps its content but not its name: a different bundle.
		rmSync(join(root, 'src', 'lib', 'a.ts'));
		writeFileSync(join(root, 'src', 'lib', 'b.ts'), 'export const a = 2;\n');
		seen.add(inputsHash(root));
		expect(seen.size).toBe(5);
	});
});

describe('pruneBuilds', () => {
	it('removes only builds no live process uses, and dead builds’ temporary folders', () => {
		const buildRoot = join(dir, 'build');
		const [inUse, abandoned, neverUsed, current] = ['a', 'b', 'c', 'd'].map((c) =>
			join(buildRoot, c.repeat(16))
		);
		for (const d of [inUse, abandoned, neverUsed, current]) mkdirSync(d, { recursive: true });
		const gone = deadPid();
		registerUse(inUse, process.pid);
		registerUse(abandoned, gone);
		mkdirSync(join(buildRoot, `.tmp-${'e'.repeat(16)}-${gone}`));
		mkdirSync(join(buildRoot, `.tmp-${'f'.repeat(16)}-${process.pid}`));
		mkdirSync(join(buildRoot, 'manual'));

		const removed = pruneBuilds(buildRoot, current);

		expect(removed.sort()).toEqual(['b'.repeat(16), 'c'.repeat(16), `.tmp-${'e'.repeat(16)}-${gone}`].sort());
		expect(readdirSync(buildRoot).sort()).toEqual(
			[`.tmp-${'f'.repeat(16)}-${process.pid}`, 'a'.repeat(16), 'd'.repeat(16), 'manual'].sort()
		);
		expect(existsSync(join(inUse, '.in-use', String(process.pid)))).toBe(true);
	});
});
