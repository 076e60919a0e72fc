// Bench procedures: the pure logic of the guided runs (sweeps, phono equalisation, maximum power).
export * from './sweep';
export * from './phono';
export * from './max-power';
