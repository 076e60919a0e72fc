// `import source from './x.worker.ts?node-worker'`: the worker entry bundled into one CommonJS
// script, for `new Worker(source, { eval: true })` (the node-worker plugin in vite.config.ts).
declare module '*?node-worker' {
	const source: string;
	export default source;
}
