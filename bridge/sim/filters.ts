// Biquad sections for the simulator (RBJ audio-EQ-cookbook peaking, high-pass and low-pass;
// bilinear RIAA) with their exact digital frequency response, so tones can be synthesised
// through the same filters that shape noise in the time domain.
import { RIAA_T1_S, RIAA_T2_S, RIAA_T3_S } from '../../src/lib/dsp/riaa';

export interface Biquad {
	b0: number;
	b1: number;
	b2: number;
	a1: number;
	a2: number;
}

export const IDENTITY: Biquad = { b0: 1, b1: 0, b2: 0, a1: 0, a2: 0 };

export function isIdentity(q: Biquad): boolean {
	return q.b0 === 1 && q.b1 === 0 && q.b2 === 0 && q.a1 === 0 && q.a2 === 0;
}

function norm(b0: number, b1: number, b2: number, a0: number, a1: number, a2: number): Biquad {
	return { b0: b0 / a0, b1: b1 / a0, b2: b2 / a0, a1: a1 / a0, a2: a2 / a0 };
}

/** Peaking EQ section; a 0 dB gain (or a centre too close to Nyquist) is the identity. */
export function peaking(centreHz: number, gainDb: number, q: number, sampleRateHz: number): Biquad {
	if (gainDb === 0 || centreHz >= 0.45 * sampleRateHz) return IDENTITY;
	const A = 10 ** (gainDb / 40);
	const w0 = (2 * Math.PI * centreHz) / sampleRateHz;
	const alpha = Math.sin(w0) / (2 * q);
	const c = Math.cos(w0);
	return norm(1 + alpha * A, -2 * c, 1 - alpha * A, 1 + alpha / A, -2 * c, 1 - alpha / A);
}

export function lowPass(cornerHz: number, q: number, sampleRateHz: number): Biquad {
	if (cornerHz >= 0.49 * sampleRateHz) return IDENTITY;
	const w0 = (2 * Math.PI * cornerHz) / sampleRateHz;
	const alpha = Math.sin(w0) / (2 * q);
	const c = Math.cos(w0);
	return norm((1 - c) / 2, 1 - c, (1 - c) / 2, 1 + alpha, -2 * c, 1 - alpha);
}

export function highPass(cornerHz: number, q: number, sampleRateHz: number): Biquad {
	const w0 = (2 * Math.PI * cornerHz) / sampleRateHz;
	const alpha = Math.sin(w0) / (2 * q);
	const c = Math.cos(w0);
	return norm((1 + c) / 2, -(1 + c), (1 + c) / 2, 1 + alpha, -2 * c, 1 - alpha);
}

/** Complex response of a biquad at `frequencyHz`: [re, im]. */
export function biquadResponse(q: Biquad, frequencyHz: number, sampleRateHz: number): [number, number] {
	const w = (2 * Math.PI * frequencyHz) / sampleRateHz;
	const c1 = Math.cos(w);
	const s1 = -Math.sin(w);
	const c2 = Math.cos(2 * w);
	const s2 = -Math.sin(2 * w);
	const nr = q.b0 + q.b1 * c1 + q.b2 * c2;
	const ni = q.b1 * s1 + q.b2 * s2;
	const dr = 1 + q.a1 * c1 + q.a2 * c2;
	const di = q.a1 * s1 + q.a2 * s2;
	const d = dr * dr + di * di;
	return [(nr * dr + ni * di) / d, (ni * dr - nr * di) / d];
}

/** Analog RIAA playback response (IEC 60098 time constants) at `frequencyHz`, scaled to `gain1kHz` at 1 kHz. */
export function riaaPlaybackComplex(frequencyHz: number, gain1kHz: number): [number, number] {
	const h = (f: number): [number, number] => {
		const wf = 2 * Math.PI * f;
		// (1 + jwT2) / ((1 + jwT1)(1 + jwT3))
		const dr = 1 - wf * wf * RIAA_T1_S * RIAA_T3_S;
		const di = wf * (RIAA_T1_S + RIAA_T3_S);
		const nr = 1;
		const ni = wf * RIAA_T2_S;
		const d = dr * dr + di * di;
		return [(nr * dr + ni * di) / d, (ni * dr - nr * di) / d];
	};
	const ref = h(1000);
	const k = gain1kHz / Math.hypot(ref[0], ref[1]);
	const r = h(frequencyHz);
	return [r[0] * k, r[1] * k];
}

/** Bilinear-transform RIAA playback section, scaled to `gain1kHz` at 1 kHz (time-domain noise path). */
export function riaaPlaybackBiquad(sampleRateHz: number, gain1kHz: number): Biquad {
	const K = 2 * sampleRateHz;
	const T1 = RIAA_T1_S;
	const T2 = RIAA_T2_S;
	const T3 = RIAA_T3_S;
	const q = norm(
		1 + T2 * K,
		2,
		1 - T2 * K,
		1 + (T1 + T3) * K + T1 * T3 * K * K,
		2 - 2 * T1 * T3 * K * K,
		1 - (T1 + T3) * K + T1 * T3 * K * K
	);
	const [re, im] = biquadResponse(q, 1000, sampleRateHz);
	const g = gain1kHz / Math.hypot(re, im);
	return { ...q, b0: q.b0 * g, b1: q.b1 * g, b2: q.b2 * g };
}

/** A running biquad (transposed direct form II, double precision). */
export class BiquadState {
	z1 = 0;
	z2 = 0;
	constructor(public q: Biquad) {}
	reset(): void {
		this.z1 = 0;
		this.z2 = 0;
	}
	/** Filter `buf[0..n)` in place. */
	run(buf: Float64Array, n: number): void {
		const { b0, b1, b2, a1, a2 } = this.q;
		let z1 = this.z1;
		let z2 = this.z2;
		for (let i = 0; i < n; i++) {
			const x = buf[i];
			const y = b0 * x + z1;
			z1 = b1 * x - a1 * y + z2;
			z2 = b2 * x - a2 * y;
			buf[i] = y;
		}
		this.z1 = z1;
		this.z2 = z2;
	}
}

/** Two independent biquads over two buffers in one loop (their recursions overlap in the CPU). */
export function runBiquadPair(
	a: BiquadState,
	b: BiquadState,
	xa: Float64Array,
	xb: Float64Array,
	n: number
): void {
	const { b0: a0, b1: a1c, b2: a2c, a1: aa1, a2: aa2 } = a.q;
	const { b0: c0, b1: c1, b2: c2, a1: ca1, a2: ca2 } = b.q;
	let za1 = a.z1;
	let za2 = a.z2;
	let zb1 = b.z1;
	let zb2 = b.z2;
	for (let i = 0; i < n; i++) {
		const u = xa[i];
		const w = xb[i];
		const y = a0 * u + za1;
		const v = c0 * w + zb1;
		za1 = a1c * u - aa1 * y + za2;
		zb1 = c1 * w - ca1 * v + zb2;
		za2 = a2c * u - aa2 * y;
		zb2 = c2 * w - ca2 * v;
		xa[i] = y;
		xb[i] = v;
	}
	a.z1 = za1;
	a.z2 = za2;
	b.z1 = zb1;
	b.z2 = zb2;
}

export function cmul(a: [number, number], b: [number, number]): [number, number] {
	return [a[0] * b[0] - a[1] * b[1], a[0] * b[1] + a[1] * b[0]];
}
