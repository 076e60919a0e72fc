// Thumbnail spectra: a per-bin dBV spectrum reduced to a few thousand log-spaced points, keeping the
// maximum inside each log bin so tones and harmonics survive the reduction.

export interface CompactSpectrum {
	frequencyHz: number[];
	levelDbv: number[];
}

export function compactSpectrum(
	spectrumDbv: ArrayLike<number>,
	sampleRateHz: number,
	fftSize: number,
	points = 2000,
	fMinHz = 10,
	fMaxHz = sampleRateHz / 2
): CompactSpectrum {
	const binHz = sampleRateHz / fftSize;
	const lastBin = Math.min(spectrumDbv.length - 1, Math.floor(fftSize / 2));
	const lo = Math.max(fMinHz, binHz);
	const hi = Math.min(fMaxHz, lastBin * binHz);
	const frequencyHz: number[] = [];
	const levelDbv: number[] = [];
	if (!(hi > lo) || points < 1) return { frequencyHz, levelDbv };
	const ratio = hi / lo;
	let prevBin = -1;
	for (let i = 0; i < points; i++) {
		const f0 = lo * ratio ** (i / points);
		const f1 = lo * ratio ** ((i + 1) / points);
		let k0 = Math.ceil(f0 / binHz - 1e-9);
		let k1 = Math.min(
			lastBin,
			i === points - 1 ? Math.floor(f1 / binHz + 1e-9) : Math.ceil(f1 / binHz - 1e-9) - 1
		);
		if (k1 < k0) {
			// Log bin narrower than an FFT bin: take the nearest FFT bin once.
			k0 = k1 = Math.min(lastBin, Math.round(Math.sqrt(f0 * f1) / binHz));
		}
		if (k1 <= prevBin) continue;
		if (k0 <= prevBin) k0 = prevBin + 1;
		let best = k0;
		for (let k = k0 + 1; k <= k1; k++) if (spectrumDbv[k] > spectrumDbv[best]) best = k;
		frequencyHz.push(best * binHz);
		levelDbv.push(spectrumDbv[best]);
		prevBin = k1;
	}
	return { frequencyHz, levelDbv };
}
