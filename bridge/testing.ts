// Small, independent measuring helpers for the bridge's tests (deliberately not the DSP
// library): a single-bin DFT over whole periods and plain rms.

/** Peak amplitude of the `frequencyHz` component of `x` (use a length holding whole periods). */
export function toneAmplitude(x: ArrayLike<number>, frequencyHz: number, sampleRateHz: number): number {
	const w = (2 * Math.PI * frequencyHz) / sampleRateHz;
	let re = 0;
	let im = 0;
	for (let n = 0; n < x.length; n++) {
		re += x[n] * Math.cos(w * n);
		im -= x[n] * Math.sin(w * n);
	}
	return (2 * Math.hypot(re, im)) / x.length;
}

export function rms(x: ArrayLike<number>): number {
	let s = 0;
	for (let i = 0; i < x.length; i++) s += x[i] * x[i];
	return Math.sqrt(s / x.length);
}

export function mean(x: ArrayLike<number>): number {
	let s = 0;
	for (let i = 0; i < x.length; i++) s += x[i];
	return s / x.length;
}

export function db(ratio: number): number {
	return 20 * Math.log10(ratio);
}

/** THD (ratio to the fundamental) from harmonics 2..maxOrder below Nyquist. */
export function thd(x: ArrayLike<number>, f0Hz: number, sampleRateHz: number, maxOrder = 10): number {
	const a1 = toneAmplitude(x, f0Hz, sampleRateHz);
	let h = 0;
	for (let k = 2; k <= maxOrder && k * f0Hz < sampleRateHz / 2; k++)
		h += toneAmplitude(x, k * f0Hz, sampleRateHz) ** 2;
	return Math.sqrt(h) / a1;
}

/** One channel of interleaved samples, scaled to volts. */
export function channelVolts(
	interleaved: Float32Array,
	channels: number,
	channel: number,
	fullScaleVolts: number
): Float64Array {
	const n = Math.floor(interleaved.length / channels);
	const out = new Float64Array(n);
	for (let i = 0; i < n; i++) out[i] = interleaved[i * channels + channel] * fullScaleVolts;
	return out;
}
