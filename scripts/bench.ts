// `npm run bench`: every benchmark in scripts/bench/, one after the other (or those named:
// `npm run bench -- dsp jobs`). Each prints figures and ratios measured in one run.
import { readdirSync } from 'node:fs';
import { basename, resolve } from 'node:path';
import { pathToFileURL } from 'node:url';

const dir = resolve(import.meta.dirname, 'bench');
const wanted = process.argv.slice(2);
const names = readdirSync(dir)
	.filter((f) => f.endsWith('.ts') && !f.endsWith('.test.ts'))
	.map((f) => basename(f, '.ts'))
	.filter((n) => wanted.length === 0 || wanted.includes(n))
	.sort();

for (const name of names) {
	console.log(`\n== ${name}`);
	const mod = (await import(pathToFileURL(resolve(dir, `${name}.ts`)).href)) as { run: () => Promise<void> };
	await mod.run();
}
