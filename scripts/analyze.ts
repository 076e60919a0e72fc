// Command-line analysis of a WAV file with the same measurement core the browser and server use.
// Usage: npm run analyze -- FILE.wav [--json] [--channel N] [--fft SIZE] [--window NAME] [--band LO-HI]
//        npm run analyze -- FILE.wav --response [--riaa [--iec-rolloff]] [--json] [--channel N]
//        [--weighting a|none] [--full-scale-volts V] [--load OHMS] [--stimulus tone|none|smpte|twin-tone]
//        [--mains 50|60] [--expect-hz HZ] [--sn-ref V]

import { readFileSync } from 'node:fs';
import { basename } from 'node:path';
import { parseArgs } from 'node:util';
import {
	analyzeFrames,
	decodeWav,
	defaultFftSize,
	isPowerOfTwo,
	isWindowName,
	windows,
	WavError,
	WINDOW_NAMES,
	MIN_FFT_SIZE,
	MAX_FFT_SIZE,
	STIMULI,
	type AnalysisOptions,
	type Stimulus,
	type AnalysisResult,
	type ChannelResult,
	type WindowName
} from '../src/lib/dsp/index';
import { analyzeSweepRecording, type SweepFileResult } from '../src/lib/procedures/sweep-file';

const USAGE = `usage: npm run analyze -- FILE.wav [options]
  --json                  print one JSON document instead of the table
  --response              the file is a stepped-sine sweep (steady tones of ≥ 150 ms, separated by
                          ≤ 50 ms of transition or silence): the level of every step per channel, re
                          the step nearest 1 kHz, and the flatness (± half the spread, dB)
  --riaa                  with --response: also each step's deviation from the RIAA playback curve
                          (re the same step); the flatness is then that of the deviation
  --iec-rolloff           with --riaa: the expected curve includes the IEC 7950 µs term
  --channel N             analyse only channel N (0 = first/left); default all channels
  --fft SIZE              FFT size, a power of two (default: largest that fits, at most 262144)
  --window NAME           spectrum window: ${WINDOW_NAMES.join(', ')}
  --band LO-HI            measurement band in Hz, e.g. 20-20000, 22-22k, 10-80k (default 20-20000)
  --weighting a|none      weighting for THD+N (noise is reported both ways)
  --full-scale-volts V    volts peak at sample value 1.0 (default 1)
  --load OHMS             resistive load, for power in watts
  --averages N            power-average N consecutive frames (default 1)
  --stimulus KIND         what drove the unit: tone (default), none (residual noise and hum),
                          smpte or twin-tone (IMD); without a tone THD, THD+N and frequency are null
  --mains 50|60           mains frequency for the hum breakdown (default 50)
  --expect-hz HZ          generator frequency: a strongest tone elsewhere reads as "no signal"
  --tone-margin DB        a tone must stand this far above the noise to count (default 10)
  --sn-ref V              S/N reference output in V rms (with --stimulus none), e.g. 2.83 for 1 W into 8 Ω`;

/** Exit codes: 1 = the file or its analysis failed, 2 = the command line is wrong. */
class CliError extends Error {
	constructor(
		message: string,
		readonly code: 1 | 2
	) {
		super(message);
	}
}

function usageError(message: string): never {
	throw new CliError(message, 2);
}

function parseHz(text: string): number {
	const m = /^(\d+(?:\.\d+)?)(k)?$/i.exec(text.trim());
	if (!m) return NaN;
	return Number(m[1]) * (m[2] ? 1000 : 1);
}

function positiveNumber(name: string, text: string | undefined): number | undefined {
	if (text === undefined) return undefined;
	const v = Number(text);
	if (!Number.isFinite(v) || v <= 0) usageError(`--${name} must be a positive number, got "${text}"`);
	return v;
}

interface Cli {
	file: string;
	json: boolean;
	response: boolean;
	riaa: boolean;
	iecRolloff: boolean;
	channel?: number;
	fullScaleVolts: number;
	options: AnalysisOptions;
}

function parseCli(argv: string[]): Cli {
	let parsed;
	try {
		parsed = parseArgs({
			args: argv,
			allowPositionals: true,
			strict: true,
			options: {
				json: { type: 'boolean' },
				response: { type: 'boolean' },
				riaa: { type: 'boolean' },
				'iec-rolloff': { type: 'boolean' },
				help: { type: 'boolean', short: 'h' },
				channel: { type: 'string' },
				fft: { type: 'string' },
				window: { type: 'string' },
				band: { type: 'string' },
				weighting: { type: 'string' },
				'full-scale-volts': { type: 'string' },
				load: { type: 'string' },
				averages: { type: 'string' },
				stimulus: { type: 'string' },
				mains: { type: 'string' },
				'expect-hz': { type: 'string' },
				'tone-margin': { type: 'string' },
				'sn-ref': { type: 'string' }
			}
		});
	} catch (err) {
		usageError(err instanceof Error ? err.message.split('\n')[0] : String(err));
	}
	const { values, positionals } = parsed;
	if (values.help) {
		console.log(USAGE);
		process.exit(0);
	}
	if (positionals.length !== 1)
		usageError(positionals.length ? 'give exactly one WAV file' : 'no WAV file given');
	const options: AnalysisOptions = {};
	let channel: number | undefined;
	if (values.channel !== undefined) {
		if (!/^\d+$/.test(values.channel))
			usageError(`--channel must be a channel index (0, 1, …), got "${values.channel}"`);
		channel = Number(values.channel);
	}
	if (values.fft !== undefined) {
		const n = Number(values.fft);
		if (!isPowerOfTwo(n) || n < MIN_FFT_SIZE || n > MAX_FFT_SIZE)
			usageError(`--fft must be a power of two from ${MIN_FFT_SIZE} to ${MAX_FFT_SIZE}, got "${values.fft}"`);
		options.fftSize = n;
	}
	if (values.window !== undefined) {
		if (!isWindowName(values.window)) usageError(`--window must be one of ${WINDOW_NAMES.join(', ')}`);
		options.window = values.window as WindowName;
	}
	if (values.band !== undefined) {
		const parts = values.band.split('-');
		const lo = parts.length === 2 ? parseHz(parts[0]) : NaN;
		const hi = parts.length === 2 ? parseHz(parts[1]) : NaN;
		if (!Number.isFinite(lo) || !Number.isFinite(hi) || !(hi > lo))
			usageError(`--band must be LO-HI in Hz with LO < HI (e.g. 20-20000 or 22-22k), got "${values.band}"`);
		options.bandHz = [lo, hi];
	}
	if (values.weighting !== undefined) {
		const w = values.weighting.toLowerCase();
		if (w !== 'a' && w !== 'none') usageError(`--weighting must be "a" or "none", got "${values.weighting}"`);
		options.weighting = w;
	}
	const fullScaleVolts = positiveNumber('full-scale-volts', values['full-scale-volts']) ?? 1;
	options.loadOhms = positiveNumber('load', values.load);
	if (values.averages !== undefined) {
		if (!/^\d+$/.test(values.averages) || Number(values.averages) < 1)
			usageError(`--averages must be a whole number ≥ 1, got "${values.averages}"`);
		options.averages = Number(values.averages);
	}
	if (values.stimulus !== undefined) {
		const st = values.stimulus.toLowerCase();
		if (!(STIMULI as readonly string[]).includes(st))
			usageError(`--stimulus must be one of ${STIMULI.join(', ')}, got "${values.stimulus}"`);
		options.stimulus = st as Stimulus;
	}
	if (values.mains !== undefined) {
		if (values.mains !== '50' && values.mains !== '60')
			usageError(`--mains must be 50 or 60 (Hz), got "${values.mains}"`);
		options.mainsHz = values.mains === '50' ? 50 : 60;
	}
	options.expectedFrequencyHz = positiveNumber('expect-hz', values['expect-hz']);
	if (values['tone-margin'] !== undefined) {
		const m = Number(values['tone-margin']);
		if (!Number.isFinite(m))
			usageError(`--tone-margin must be a number of dB, got "${values['tone-margin']}"`);
		options.toneMarginDb = m;
	}
	const snRef = positiveNumber('sn-ref', values['sn-ref']);
	if (snRef !== undefined) options.snReference = { vrms: snRef, label: `re ${snRef} V` };
	if (values.riaa && !values.response) usageError('--riaa goes with --response (a phono sweep)');
	if (values['iec-rolloff'] && !values.riaa) usageError('--iec-rolloff goes with --riaa');
	return {
		file: positionals[0],
		json: values.json ?? false,
		response: values.response ?? false,
		riaa: values.riaa ?? false,
		iecRolloff: values['iec-rolloff'] ?? false,
		channel,
		fullScaleVolts,
		options
	};
}

function readWav(file: string) {
	let bytes: Uint8Array;
	try {
		bytes = readFileSync(file);
	} catch (err) {
		const code = (err as NodeJS.ErrnoException).code;
		const why =
			code === 'ENOENT'
				? 'no such file'
				: code === 'EISDIR'
					? 'is a directory'
					: code === 'EACCES'
						? 'permission denied'
						: String(code ?? err);
		throw new CliError(`cannot read ${file}: ${why}`, 1);
	}
	try {
		return decodeWav(new Uint8Array(bytes.buffer, bytes.byteOffset, bytes.byteLength));
	} catch (err) {
		if (err instanceof WavError) throw new CliError(`${file}: ${err.message}`, 1);
		throw err;
	}
}

const fmt = (v: number | null | undefined, digits: number) =>
	v === undefined || v === null ? '—' : v.toFixed(digits);
const prec = (v: number | null | undefined, digits: number) =>
	v === undefined || v === null ? '—' : v.toPrecision(digits);

function table(file: string, wav: ReturnType<typeof decodeWav>, result: AnalysisResult): string {
	const c = result.conditions;
	const chs = result.channels;
	const lines: string[] = [];
	const durationS = wav.channels[0].length / wav.sampleRateHz;
	lines.push(
		`${file}: ${wav.sampleRateHz} Hz, ${wav.channels.length} ch, ${wav.bitsPerSample}-bit ${wav.format === 'pcm-float' ? 'float' : 'integer'}, ${durationS.toFixed(2)} s`
	);
	lines.push(
		`FFT ${c.fftSize} (${c.binHz.toFixed(3)} Hz/bin)${c.averages > 1 ? ` × ${c.averages} averages` : ''}, band ${c.bandHz[0]}–${c.bandHz[1]} Hz, ` +
			`THD+N weighting ${c.weighting === 'a' ? 'A' : 'none'}, spectrum window ${windows[c.window].label}, full scale ${c.fullScaleVolts[0]} V peak` +
			(c.loadOhms ? `, load ${c.loadOhms} Ω` : '')
	);
	const rows: [string, string, (r: ChannelResult) => string][] = [
		['Frequency', 'Hz', (r) => fmt(r.frequencyHz, 3)],
		['Level', 'V rms', (r) => r.levelVrms.toPrecision(6)],
		['Level', 'dBV', (r) => fmt(r.levelDbv, 2)],
		['Level', 'dBu', (r) => fmt(r.levelDbu, 2)],
		['Level', 'dBFS', (r) => fmt(r.levelDbfs, 2)]
	];
	if (c.loadOhms) rows.push(['Power', 'W', (r) => (r.powerW ?? 0).toPrecision(4)]);
	rows.push(
		['THD', '%', (r) => prec(r.thdPercent, 3)],
		['THD', 'dB', (r) => fmt(r.thdDb, 1)],
		[c.weighting === 'a' ? 'THD+N (A)' : 'THD+N', '%', (r) => prec(r.thdnPercent, 3)],
		[c.weighting === 'a' ? 'THD+N (A)' : 'THD+N', 'dB', (r) => fmt(r.thdnDb, 1)],
		['Noise', 'V rms', (r) => r.noiseVrms.toPrecision(3)],
		['SNR re tone', 'dB', (r) => fmt(r.snrDb, 1)],
		['Noise (A)', 'V rms', (r) => r.noiseWeightedVrms.toPrecision(3)],
		['SNR re tone (A)', 'dB', (r) => fmt(r.snrWeightedDb, 1)],
		['SINAD', 'dB', (r) => fmt(r.sinadDb, 1)],
		['ENOB', 'bits', (r) => fmt(r.enob, 2)]
	);
	if (c.snReference)
		rows.push(['S/N', 'dB', (r) => fmt(r.snDb, 1)], ['S/N (A)', 'dB', (r) => fmt(r.snWeightedDb, 1)]);
	rows.push(['DC', 'V', (r) => r.dcVolts.toPrecision(3)]);
	const orders = new Set<number>();
	for (const r of chs) for (const h of r.harmonics) orders.add(h.order);
	for (const order of [...orders].sort((a, b) => a - b))
		rows.push([`H${order}`, 'dBc', (r) => fmt(r.harmonics.find((h) => h.order === order)?.levelDbc, 1)]);
	const humOrders = new Set<number>();
	for (const r of chs) for (const h of r.hum) humOrders.add(h.order);
	for (const order of [...humOrders].sort((a, b) => a - b))
		rows.push([
			order === 1 ? 'Mains' : `Mains ×${order}`,
			'V rms',
			(r) => prec(r.hum.find((h) => h.order === order)?.levelVrms, 3)
		]);
	if (chs.some((r) => r.imd))
		rows.push(['IMD', '%', (r) => prec(r.imd?.imdPercent, 3)], ['IMD', 'dB', (r) => fmt(r.imd?.imdDb, 1)]);

	const labelW = 16;
	const unitW = 7;
	const colW = 14;
	lines.push('');
	lines.push(`Stimulus: ${c.stimulus}${c.stimulus === 'none' ? `, mains ${c.mainsHz} Hz` : ''}`);
	lines.push(''.padEnd(labelW + unitW) + chs.map((r) => `ch ${r.channel}`.padStart(colW)).join(''));
	for (const [label, unit, get] of rows)
		lines.push(label.padEnd(labelW) + unit.padEnd(unitW) + chs.map((r) => get(r).padStart(colW)).join(''));
	if (result.balanceDb !== undefined) {
		lines.push('');
		lines.push(`Balance (ch 0 re ch 1)  ${fmt(result.balanceDb, 2)} dB`);
		// Crosstalk exists only with one channel driven and the other not (≥ 10 dB apart).
		if (result.crosstalkDb !== undefined)
			lines.push(
				`Crosstalk (ch ${result.crosstalkFromChannel} → ch ${result.crosstalkToChannel})  ${fmt(result.crosstalkDb, 1)} dB`
			);
		else lines.push('Crosstalk  — (needs one channel driven and the other undriven)');
	}
	for (const r of chs) {
		if (!r.signal && r.signalReason) lines.push(`ch ${r.channel}: no signal — ${r.signalReason}`);
		if (r.harmonicsBeyondBand.length)
			lines.push(
				`ch ${r.channel}: THD understated — harmonics ${r.harmonicsBeyondBand.join(', ')} lie above the band or Nyquist`
			);
		if (r.clipping.clipped) lines.push(`ch ${r.channel}: overload — ${r.clipping.reason}`);
		if (r.imdError) lines.push(`ch ${r.channel}: IMD not measured — ${r.imdError}`);
	}
	return lines.join('\n');
}

function responseTable(file: string, r: SweepFileResult, riaa: boolean): string {
	const lines = [`${file}: ${r.steps.length} steps, levels re the step nearest 1 kHz`];
	const head = ['Frequency Hz'.padStart(14)];
	r.channels.forEach((_, ch) => {
		head.push(`ch ${ch} dBV`.padStart(12), `ch ${ch} re 1k`.padStart(12));
		if (riaa) head.push(`ch ${ch} re RIAA`.padStart(14));
	});
	lines.push(head.join(''));
	for (const s of r.steps) {
		const row = [s.frequencyHz.toFixed(2).padStart(14)];
		for (const c of s.channels) {
			row.push(c.levelDbv.toFixed(2).padStart(12), c.relativeDb.toFixed(3).padStart(12));
			if (riaa) row.push(c.riaaDeviationDb!.toFixed(3).padStart(14));
		}
		lines.push(row.join(''));
	}
	lines.push('');
	r.channels.forEach((c, ch) =>
		lines.push(`ch ${ch}: ${riaa ? 'RIAA deviation' : 'flat'} within ±${c.flatnessDb.toFixed(3)} dB`)
	);
	return lines.join('\n');
}

function main(argv: string[]): void {
	const cli = parseCli(argv);
	const wav = readWav(cli.file);
	let chans = wav.channels;
	if (cli.channel !== undefined) {
		if (cli.channel >= wav.channels.length)
			usageError(
				`--channel ${cli.channel} does not exist: the file has ${wav.channels.length} channel(s), 0…${wav.channels.length - 1}`
			);
		chans = [wav.channels[cli.channel]];
	}
	if (cli.response) {
		let r: SweepFileResult;
		try {
			r = analyzeSweepRecording(chans, wav.sampleRateHz, {
				riaa: cli.riaa,
				iecRolloff: cli.iecRolloff,
				fullScaleVolts: cli.fullScaleVolts
			});
		} catch (err) {
			if (err instanceof RangeError) throw new CliError(`${cli.file}: ${err.message}`, 1);
			throw err;
		}
		process.stdout.write(
			(cli.json ? JSON.stringify(r, null, 2) : responseTable(basename(cli.file), r, cli.riaa)) + '\n'
		);
		return;
	}
	const length = chans[0].length;
	const fftSize = cli.options.fftSize ?? defaultFftSize(length);
	if (length < fftSize)
		throw new CliError(
			cli.options.fftSize
				? `${cli.file}: ${length} samples per channel, fewer than --fft ${fftSize}`
				: `${cli.file}: too short to analyse (${length} samples per channel, at least ${MIN_FFT_SIZE} needed)`,
			1
		);
	const options = { ...cli.options, fftSize };
	let result: AnalysisResult;
	try {
		result = analyzeFrames(chans, wav.sampleRateHz, cli.fullScaleVolts, options);
	} catch (err) {
		if (err instanceof RangeError) throw new CliError(`${cli.file}: ${err.message}`, 2);
		throw err;
	}
	if (cli.channel !== undefined) for (const r of result.channels) r.channel = cli.channel;
	if (cli.json) {
		const doc = {
			file: basename(cli.file),
			sampleRateHz: result.sampleRateHz,
			conditions: result.conditions,
			// noiseAVrms: the A-weighted noise under the short name the issue and shop sheets use.
			channels: result.channels.map((r) => ({ ...r, noiseAVrms: r.noiseWeightedVrms })),
			...(result.balanceDb !== undefined
				? {
						balanceDb: result.balanceDb,
						crosstalkDb: result.crosstalkDb,
						crosstalkFromChannel: result.crosstalkFromChannel,
						crosstalkToChannel: result.crosstalkToChannel
					}
				: {})
		};
		process.stdout.write(JSON.stringify(doc, null, 2) + '\n');
	} else {
		process.stdout.write(table(cli.file, wav, result) + '\n');
	}
}

try {
	main(process.argv.slice(2));
} catch (err) {
	// One line on stderr, never a stack trace.
	const code = err instanceof CliError ? err.code : 1;
	const msg = err instanceof Error ? err.message : String(err);
	process.stderr.write(`analyze: ${msg.split('\n')[0]}\n`);
	process.exitCode = code;
}
