// Bench procedures: the pure logic of the guided runs (sweeps, phono equalisation, maximum power,
// crosstalk, IMD, the front-panel meter check).
export * from './sweep';
export * from './phono';
export * from './max-power';
export * from './crosstalk';
export * from './imd';
export * from './meter';
export * from './stability';
export * from './limits';
