// Public API of the measurement core: one analysis library for the browser worker, the server and the CLI.
// Pure TypeScript (no DOM, no node: imports).

export * from './units';
export * from './riaa';
export * from './types';
export {
	windows,
	WINDOW_NAMES,
	ANALYSIS_WINDOW,
	isWindowName,
	makeWindow,
	WindowKernel,
	type WindowName,
	type WindowInfo
} from './windows';
export { aWeightingDb, aWeightingPowerGain, aWeightingTable, cWeightingDb } from './weighting';
export {
	Analyzer,
	analyzeChannel,
	analyzeFrames,
	channelBalanceDb,
	toneLevelAt,
	crosstalkDb,
	CROSSTALK_MIN_BALANCE_DB,
	stereoFigures,
	type StereoFigures,
	sharedFft,
	sharedWindow,
	defaultFftSize,
	isPowerOfTwo,
	db10,
	db20,
	MIN_DB,
	MIN_FFT_SIZE,
	MAX_FFT_SIZE,
	DEFAULT_FFT_CAP,
	DEFAULT_BAND_HZ,
	DEFAULT_TONE_MARGIN_DB,
	HUM_ORDERS,
	FLAT_TOP_PERCENT,
	type AnalyzerOptions,
	type AveragingMode
} from './analyzer';
export { ToneFitter } from './tonefit';
export { compactSpectrum, type CompactSpectrum } from './spectrum';
export {
	smpteImd,
	twinToneImd,
	imdOnSpectrum,
	type ImdResult,
	type ImdProduct,
	type ImdOptions
} from './imd';
export { steadiness, SteadinessTracker, type SteadinessSample, type SteadinessStats } from './steadiness';
export {
	analysisResultSchema,
	channelResultSchema,
	harmonicResultSchema,
	analysisConditionsSchema,
	analysisOptionsSchema,
	weightingSchema,
	stimulusSchema,
	mainsHzSchema,
	type ChannelResultParsed,
	type AnalysisResultParsed
} from './schema';
export { decodeWav, encodeWav, WavError, MAX_WAV_CHANNELS, type DecodedWav, type WavFormat } from './wav';
