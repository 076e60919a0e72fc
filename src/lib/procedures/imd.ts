// Intermodulation distortion as a procedure: SMPTE (60 Hz + 7 kHz at 4:1) and twin-tone (19 + 20 kHz,
// 1:1) at a chosen level. The bench reads each channel's two tones and products with the measurement
// core; the server recomputes the figures from those levels with the same definitions
// ($lib/dsp/imd: imdProducts, imdFigures) and judges them.
import { imdFigures, imdProducts } from '$lib/dsp/imd';

export const IMD_METHODS = ['smpte', 'twin-tone'] as const;
export type ImdMethod = (typeof IMD_METHODS)[number];

/** The standard tones: SMPTE RP120 60 Hz + 7 kHz at 4:1; twin-tone (IEC 60268-3 difference frequency) 19 + 20 kHz. */
export const IMD_TONES: Record<ImdMethod, { f1Hz: number; f2Hz: number; ratio: number }> = {
	smpte: { f1Hz: 60, f2Hz: 7000, ratio: 4 },
	'twin-tone': { f1Hz: 19_000, f2Hz: 20_000, ratio: 1 }
};

/** One channel's reading: both tones and each product (imdProducts' order), V rms. */
export interface ImdChannelReading {
	tone1Vrms: number;
	tone2Vrms: number;
	productVrms: number[];
}

export interface ImdChannelFigures {
	d2Percent: number;
	d3Percent: number;
	imdPercent: number;
	/** 20·lg of the IMD ratio (−∞ shown as −200). */
	imdDb: number;
}

export function evaluateImd(method: ImdMethod, reading: ImdChannelReading): ImdChannelFigures {
	if (!(reading.tone1Vrms > 0) || !(reading.tone2Vrms > 0))
		throw new RangeError(`${method} IMD needs both tones present`);
	const f = imdFigures(method, reading.tone1Vrms, reading.tone2Vrms, reading.productVrms);
	return {
		d2Percent: f.d2 * 100,
		d3Percent: f.d3 * 100,
		imdPercent: f.imd * 100,
		imdDb: f.imd > 0 ? 20 * Math.log10(f.imd) : -200
	};
}

/** The products a method reads (labels and frequencies) for the nominal tones. */
export function imdProductPlan(method: ImdMethod) {
	const t = IMD_TONES[method];
	return imdProducts(method, t.f1Hz, t.f2Hz);
}

/** IMD % ↔ dB (20·lg of the ratio). */
export const imdPercentToDb = (percent: number): number => 20 * Math.log10(percent / 100);
