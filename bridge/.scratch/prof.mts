import { Simulator } from '../sim/simulator.ts';
import { Rng } from '../sim/rng.ts';
const r = new Rng(1); let t = performance.now(); let s = 0; for (let i = 0; i < 4e6; i++) s += r.gaussian(); console.log('gauss ns', (performance.now()-t)/4e6*1e6);
t = performance.now(); for (let i = 0; i < 4e6; i++) s += r.uniform(); console.log('uniform ns', (performance.now()-t)/4e6*1e6);
const sim = new Simulator({ sampleRateHz: 192000, channels: 2, seed: 1, generator: { kind:'sine', frequencyHz:1000, levelVrms:0.3 } });
const out = new Float32Array(4096*2);
for (let k=0;k<3;k++){ t = performance.now(); for (let i = 0; i < 200; i++) sim.render(out, 4096); console.log('render ns/ch-sample', (performance.now()-t)/(200*4096*2)*1e6); }
