// Snapshots: a captured WAV goes in, the server re-runs the measurement core on it, evaluates the
// chosen limit profile and stores results, verdict, a compact spectrum and the audio in one
// transaction. What the browser claims about its readings is never stored as a result.
import { createHash } from 'node:crypto';
import { and, desc, eq } from 'drizzle-orm';
import { z } from 'zod';
import {
	Analyzer,
	analyzeFrames,
	compactSpectrum,
	decodeWav,
	isWindowName,
	SteadinessTracker,
	WavError,
	WINDOW_NAMES,
	type AnalysisOptions,
	type AnalysisResult,
	type CompactSpectrum,
	type WindowName
} from '$lib/dsp';
import {
	evaluateLimits,
	measurementsFromResults,
	verdictOf,
	conditionChecks,
	type Check,
	type LimitProfileView,
	type Verdict,
	type Weighting
} from '$lib/limit-profiles';
import { CAPTURE_SECONDS } from '$lib/workers/analysis-messages';
import type { AnalysisConditions } from '$lib/dsp/types';
import type { SnapshotListItem } from '$lib/snapshots/types';
import { DomainError, type Issue } from './errors';
import { formatIssues } from './validate';
import type { Db } from './db/open';
import * as table from './db/schema';
import { SNAPSHOT_STAGES } from './db/schema';
import { getLimitProfile } from './limit-profiles';

export const SNAPSHOT_MAX_WAV_BYTES = 32 * 1024 * 1024;
/** Shortest capture the server analyses: one 4k FFT frame (the smallest size the bench offers). */
export const SNAPSHOT_MIN_SAMPLES = 4096;
export const SNAPSHOT_SPECTRUM_POINTS = 2000;
/** Steadiness needs at least this many analysis frames across the capture, else it is "not measured". */
export const STEADINESS_MIN_FRAMES = 3;
/**
 * Steadiness reads at most the newest this-many seconds of a capture (or one FFT frame, if longer):
 * the history the bench keeps and sends (CAPTURE_SECONDS). It bounds the server's work per upload to
 * about 4 × 6 s of audio through the FFT, whatever the WAV's length; older audio is stored, not analysed.
 */
export const STEADINESS_MAX_SECONDS = CAPTURE_SECONDS;

const finite = z.number().refine(Number.isFinite, 'must be a finite number');

export const snapshotMetaSchema = z.strictObject({
	label: z.string().trim().min(1, 'Give the snapshot a label').max(200),
	stage: z.enum(SNAPSHOT_STAGES),
	profileId: z.number().int().positive().nullish(),
	/** Peak volts of sample value 1.0: one number for all channels or one per channel. */
	fullScaleVolts: z
		.union([finite.positive().max(10_000), z.array(finite.positive().max(10_000)).min(1).max(8)])
		.default(1),
	loadOhms: finite.positive().max(100_000).nullish(),
	/** Generator level in V rms, for gain. */
	referenceVrms: finite.positive().max(100).nullish(),
	/** How the bench analysed it; used where a chosen profile does not fix the condition. */
	analysis: z
		.strictObject({
			fftSize: z
				.number()
				.int()
				.min(SNAPSHOT_MIN_SAMPLES)
				.max(262_144)
				.refine((n) => (n & (n - 1)) === 0, 'must be a power of two')
				.optional(),
			window: z.enum(WINDOW_NAMES as [WindowName, ...WindowName[]]).optional(),
			bandHz: z
				.tuple([finite.nonnegative(), finite.positive()])
				.refine(([lo, hi]) => hi > lo, 'upper band edge must be above the lower')
				.optional(),
			weighting: z.enum(['none', 'a']).optional(),
			averages: z.number().int().min(1).max(64).optional()
		})
		.optional(),
	/** Generator, simulator and page settings as the bench had them (kept for the record, not trusted). */
	settings: z
		.record(z.string(), z.unknown())
		.refine((v) => JSON.stringify(v).length <= 32_768, 'settings are larger than 32 KiB')
		.optional()
});
export type SnapshotMeta = z.input<typeof snapshotMetaSchema>;

/** A bad upload, named by where it is wrong (`samples`, `meta`, `meta.profileId` …): answered as a 400. */
function invalid(path: string, message: string, issues?: Issue[]): DomainError {
	return new DomainError('invalid', message, issues ?? [{ path, message }]);
}

export interface SteadinessResult {
	channel: number;
	/** Analysis frames across the newest STEADINESS_MAX_SECONDS of the capture (hop = fftSize/4). */
	frames: number;
	levelSpreadDb: number | null;
	thdnSpreadDb: number | null;
	levelStdDb: number | null;
	thdnStdDb: number | null;
	/** Audio the steadiness frames span, s (at most STEADINESS_MAX_SECONDS, or one frame). */
	durationS: number;
}

/** Where a measuring condition came from: the chosen profile, the bench's meta, or neither. */
export type ConditionSource = 'profile' | 'bench' | 'default' | 'none';

export interface ConditionSources {
	bandHz: ConditionSource;
	weighting: ConditionSource;
	loadOhms: ConditionSource;
	referenceVrms: ConditionSource;
}

/** What is stored in `snapshots.results`: the analysis (CLI JSON shape) plus steadiness. */
export interface SnapshotResults extends AnalysisResult {
	/** The analysis conditions plus where each profile-governed one came from. */
	conditions: AnalysisConditions & { sources: ConditionSources };
	steadiness: SteadinessResult[];
	/** Samples per channel in the uploaded WAV, and how many of the newest were analysed. */
	capturedSamples: number;
	analysedSamples: number;
}

export interface SnapshotSpectrum {
	fftSize: number;
	window: WindowName;
	/** One compact spectrum per channel (dBV, log-spaced points; each channel its own x values). */
	channels: CompactSpectrum[];
}

export interface CreatedSnapshot {
	id: number;
	results: SnapshotResults;
	verdict: Verdict;
	checks: Check[];
}

/** Parse the `meta` part: JSON text → validated meta, or a 400 naming the problem. */
export function parseSnapshotMeta(raw: unknown): z.output<typeof snapshotMetaSchema> {
	let value = raw;
	if (typeof raw === 'string') {
		try {
			value = JSON.parse(raw);
		} catch {
			throw invalid('meta', 'meta is not valid JSON');
		}
	}
	const parsed = snapshotMetaSchema.safeParse(value);
	if (!parsed.success)
		throw invalid(
			'meta',
			'meta is invalid',
			formatIssues(parsed.error).map((i) => ({ ...i, path: i.path ? `meta.${i.path}` : 'meta' }))
		);
	return parsed.data;
}

function largestPow2AtMost(n: number): number {
	let p = 1;
	while (p * 2 <= n) p *= 2;
	return p;
}

/**
 * Steadiness over the newest STEADINESS_MAX_SECONDS (at least one frame): frames of fftSize, the
 * bench's frame size, every fftSize/4 samples.
 */
function steadinessOf(
	capture: Float32Array,
	index: number,
	sampleRateHz: number,
	fullScaleVolts: number,
	fftSize: number,
	options: AnalysisOptions
): SteadinessResult {
	const span = Math.min(capture.length, Math.max(fftSize, Math.ceil(STEADINESS_MAX_SECONDS * sampleRateHz)));
	const channel = capture.subarray(capture.length - span);
	const hop = fftSize / 4;
	const frames = channel.length >= fftSize ? Math.floor((channel.length - fftSize) / hop) + 1 : 0;
	const base = { channel: index, frames, durationS: channel.length / sampleRateHz };
	if (frames < STEADINESS_MIN_FRAMES)
		return { ...base, levelSpreadDb: null, thdnSpreadDb: null, levelStdDb: null, thdnStdDb: null };
	const analyzer = new Analyzer(fftSize, sampleRateHz, { ...options, averaging: 'none', spectrum: false });
	const tracker = new SteadinessTracker(frames);
	// Frames end at the newest sample, like the live meter's window.
	const start = channel.length - fftSize - (frames - 1) * hop;
	for (let f = 0; f < frames; f++) {
		const off = start + f * hop;
		const r = analyzer.analyze(channel.subarray(off, off + fftSize), fullScaleVolts, index);
		tracker.push(r.levelDbv, r.thdnDb);
	}
	const s = tracker.stats();
	return {
		...base,
		levelSpreadDb: s.levelSpreadDb,
		thdnSpreadDb: s.thdnSpreadDb,
		levelStdDb: s.levelStdDb,
		thdnStdDb: s.thdnStdDb
	};
}

function spectrumOf(
	channels: Float32Array[],
	sampleRateHz: number,
	fsv: number[],
	fftSize: number,
	options: AnalysisOptions
): SnapshotSpectrum {
	const window = options.window ?? 'blackman-harris-7';
	const out: CompactSpectrum[] = channels.map((c, i) => {
		const a = new Analyzer(fftSize, sampleRateHz, { ...options, averaging: 'none', spectrum: true });
		a.analyze(c.subarray(c.length - fftSize), fsv[i]);
		const s = compactSpectrum(a.spectrumDbv, sampleRateHz, fftSize, SNAPSHOT_SPECTRUM_POINTS);
		// Three decimals of a dB are plenty for plots and keep the JSON small.
		return {
			frequencyHz: s.frequencyHz.map((f) => Math.round(f * 1000) / 1000),
			levelDbv: s.levelDbv.map((v) => Math.round(v * 1000) / 1000)
		};
	});
	return { fftSize, window, channels: out };
}

export interface CreateSnapshotInput {
	jobId: number;
	userId: string;
	wav: Uint8Array;
	/** The `meta` part as received (JSON text or an object). */
	meta: unknown;
}

/**
 * Analyse, judge and store a snapshot. Throws DomainError('invalid') for bad input (nothing stored) and
 * returns what the API answers with.
 */
export function createSnapshot(db: Db, input: CreateSnapshotInput): CreatedSnapshot {
	const meta = parseSnapshotMeta(input.meta);

	if (input.wav.byteLength > SNAPSHOT_MAX_WAV_BYTES)
		throw invalid('samples', `samples: the WAV file is larger than ${SNAPSHOT_MAX_WAV_BYTES} bytes`);
	let decoded;
	try {
		decoded = decodeWav(input.wav);
	} catch (e) {
		if (e instanceof WavError) throw invalid('samples', `samples: ${e.message}`);
		throw invalid('samples', 'samples: unreadable WAV file');
	}
	const { sampleRateHz, channels } = decoded;
	const length = channels[0].length;
	if (length < SNAPSHOT_MIN_SAMPLES)
		throw invalid(
			'samples',
			`samples: the WAV file holds ${length} samples per channel; at least ${SNAPSHOT_MIN_SAMPLES} are needed`
		);
	if (channels.length > 2)
		throw invalid('samples', `samples: ${channels.length} channels; the bench captures one or two`);
	for (const c of channels) {
		for (let i = 0; i < c.length; i++) {
			if (!Number.isFinite(c[i]))
				throw invalid('samples', 'samples: the WAV file contains NaN or infinite samples');
		}
	}

	let profile: LimitProfileView | null = null;
	if (meta.profileId != null) {
		profile = getLimitProfile(db, meta.profileId);
		if (!profile)
			throw invalid('meta.profileId', `meta.profileId: no limit profile with id ${meta.profileId}`);
		if (profile.archived)
			throw invalid('meta.profileId', `meta.profileId: the limit profile “${profile.name}” is archived`);
	}

	const fsv = channels.map((_, i) =>
		Array.isArray(meta.fullScaleVolts)
			? (meta.fullScaleVolts[i] ?? meta.fullScaleVolts[0])
			: meta.fullScaleVolts
	);

	// Band and weighting are analysis choices: the profile's win, so its limits are judged the way
	// they were written. Load and generator level are facts of the bench (the resistor on the
	// terminals, the level the generator put out): they are measured as the bench states them, and
	// where they differ from what the profile assumes, the limits that depend on them fail
	// (`conditionChecks`) instead of being computed under a condition that did not hold.
	const a = meta.analysis ?? {};
	const pc = profile?.conditions;
	type Picked<T> = { value: T | undefined; source: ConditionSource };
	const pick = <T>(
		first: [T | null | undefined, ConditionSource],
		second: [T | null | undefined, ConditionSource],
		fallback?: T
	): Picked<T> =>
		first[0] != null
			? { value: first[0], source: first[1] }
			: second[0] != null
				? { value: second[0], source: second[1] }
				: { value: fallback, source: fallback === undefined ? 'none' : 'default' };
	const band = pick<[number, number]>(
		[pc && [pc.bandLowHz, pc.bandHighHz], 'profile'],
		[a.bandHz, 'bench'],
		[20, 20_000]
	);
	const weight = pick<Weighting>([pc?.weighting, 'profile'], [a.weighting, 'bench'], 'none');
	const load = pick([meta.loadOhms, 'bench'], [pc?.loadOhms, 'profile']);
	const reference = pick([meta.referenceVrms, 'bench'], [pc?.generatorLevelVrms, 'profile']);
	const bandHz = band.value as [number, number];
	const weighting = weight.value as Weighting;
	const loadOhms = load.value;
	const referenceVrms = reference.value;
	const sources: ConditionSources = {
		bandHz: band.source,
		weighting: weight.source,
		loadOhms: load.source,
		referenceVrms: reference.source
	};
	const fftSize = Math.min(a.fftSize ?? 65_536, largestPow2AtMost(length));
	const averages = Math.max(1, Math.min(a.averages ?? 1, Math.floor(length / fftSize)));
	const window = a.window && isWindowName(a.window) ? a.window : undefined;
	const nyquist = sampleRateHz / 2;
	if (bandHz[0] >= nyquist)
		throw invalid('meta', `meta: the band starts at ${bandHz[0]} Hz, above Nyquist (${nyquist} Hz)`);
	const options: AnalysisOptions = {
		fftSize,
		window,
		bandHz: [bandHz[0], Math.min(bandHz[1], nyquist)],
		weighting,
		loadOhms,
		referenceVrms,
		averages
	};

	// The newest `averages × fftSize` samples are "the frame the bench analysed".
	const analysedSamples = averages * fftSize;
	let analysis: AnalysisResult;
	let steadinessResults: SteadinessResult[];
	let spectrum: SnapshotSpectrum;
	try {
		analysis = analyzeFrames(
			channels.map((c) => c.subarray(length - analysedSamples)),
			sampleRateHz,
			fsv,
			options
		);
		steadinessResults = channels.map((c, i) => steadinessOf(c, i, sampleRateHz, fsv[i], fftSize, options));
		spectrum = spectrumOf(channels, sampleRateHz, fsv, fftSize, options);
	} catch (e) {
		if (e instanceof RangeError) throw invalid('meta', `meta.analysis: ${e.message}`);
		throw e;
	}

	const results: SnapshotResults = {
		...analysis,
		conditions: { ...analysis.conditions, sources },
		steadiness: steadinessResults,
		capturedSamples: length,
		analysedSamples
	};
	const checks = profile
		? conditionChecks(
				evaluateLimits(
					profile.limits,
					measurementsFromResults(
						analysis.channels,
						{ balanceDb: analysis.balanceDb, crosstalkDb: analysis.crosstalkDb },
						steadinessResults,
						weighting
					)
				),
				profile.conditions,
				{ loadOhms: loadOhms ?? null, referenceVrms: referenceVrms ?? null }
			)
		: [];
	const verdict: Verdict = profile ? verdictOf(checks) : 'none';
	const sha256 = createHash('sha256').update(input.wav).digest('hex');

	const id = db.transaction((tx) => {
		const row = tx
			.insert(table.snapshots)
			.values({
				jobId: input.jobId,
				createdBy: input.userId,
				label: meta.label,
				stage: meta.stage,
				profileId: profile?.id ?? null,
				profile: profile
					? { id: profile.id, name: profile.name, conditions: profile.conditions, limits: profile.limits }
					: null,
				sampleRateHz,
				channelCount: channels.length,
				sampleCount: length,
				fullScaleVolts: fsv[0],
				loadOhms: loadOhms ?? null,
				results,
				verdict,
				checks,
				spectrum,
				settings: { ...(meta.settings ?? {}), analysis: meta.analysis ?? null, fullScaleVolts: fsv }
			})
			.returning({ id: table.snapshots.id })
			.get();
		tx.insert(table.snapshotAudio)
			.values({
				snapshotId: row.id,
				sha256,
				wav: Buffer.from(input.wav.buffer, input.wav.byteOffset, input.wav.byteLength)
			})
			.run();
		return row.id;
	});
	return { id, results, verdict, checks };
}

// ── reading ─────────────────────────────────────────────────────────────────

export type { SnapshotListItem };

export interface SnapshotDetail extends Omit<SnapshotListItem, 'thumbnail'> {
	createdBy: string;
	profileId: number | null;
	profile: unknown;
	fullScaleVolts: number;
	loadOhms: number | null;
	sampleCount: number;
	results: SnapshotResults;
	checks: Check[];
	spectrum: SnapshotSpectrum;
	settings: unknown;
	audioSha256: string | null;
}

function thumbnailOf(s: CompactSpectrum, points = 240): CompactSpectrum {
	const n = s.frequencyHz.length;
	if (n <= points) return s;
	const frequencyHz: number[] = [];
	const levelDbv: number[] = [];
	for (let p = 0; p < points; p++) {
		const a = Math.floor((p * n) / points);
		const b = Math.floor(((p + 1) * n) / points);
		let best = a;
		for (let i = a + 1; i < b; i++) if (s.levelDbv[i] > s.levelDbv[best]) best = i;
		frequencyHz.push(s.frequencyHz[best]);
		levelDbv.push(s.levelDbv[best]);
	}
	return { frequencyHz, levelDbv };
}

type SnapshotRow = typeof table.snapshots.$inferSelect;

/** The fields a list item and the detail share, from one row and its author's name. */
function itemOf(s: SnapshotRow, createdByName: string): Omit<SnapshotListItem, 'thumbnail'> {
	const r = s.results as SnapshotResults;
	const checks = (s.checks as Check[]) ?? [];
	const p = s.profile as { name?: unknown } | null;
	return {
		id: s.id,
		jobId: s.jobId,
		label: s.label,
		stage: s.stage,
		verdict: s.verdict,
		profileName: p && typeof p.name === 'string' ? p.name : null,
		createdAt: s.createdAt.toISOString(),
		createdByName,
		sampleRateHz: s.sampleRateHz,
		channelCount: s.channelCount,
		summary: (r.channels ?? []).map((c) => ({
			channel: c.channel,
			frequencyHz: c.frequencyHz,
			levelVrms: c.levelVrms,
			thdnPercent: c.thdnPercent,
			weighting: r.conditions?.weighting ?? 'none'
		})),
		checksPassed: checks.filter((c) => c.pass).length,
		checksTotal: checks.length
	};
}

export function listSnapshots(db: Db, jobId: number): SnapshotListItem[] {
	const rows = db
		.select({ s: table.snapshots, name: table.users.name })
		.from(table.snapshots)
		.innerJoin(table.users, eq(table.users.id, table.snapshots.createdBy))
		.where(eq(table.snapshots.jobId, jobId))
		.orderBy(desc(table.snapshots.createdAt), desc(table.snapshots.id))
		.all();
	return rows.map(({ s, name }) => ({
		...itemOf(s, name),
		thumbnail: ((s.spectrum as SnapshotSpectrum).channels ?? []).map((c) => thumbnailOf(c))
	}));
}

export function getSnapshot(db: Db, id: number, jobId?: number): SnapshotDetail | null {
	const where =
		jobId === undefined
			? eq(table.snapshots.id, id)
			: and(eq(table.snapshots.id, id), eq(table.snapshots.jobId, jobId));
	const found = db
		.select({ s: table.snapshots, name: table.users.name, sha: table.snapshotAudio.sha256 })
		.from(table.snapshots)
		.innerJoin(table.users, eq(table.users.id, table.snapshots.createdBy))
		.leftJoin(table.snapshotAudio, eq(table.snapshotAudio.snapshotId, table.snapshots.id))
		.where(where)
		.get();
	if (!found) return null;
	const { s, name, sha } = found;
	return {
		...itemOf(s, name),
		createdBy: s.createdBy,
		profileId: s.profileId,
		profile: s.profile,
		fullScaleVolts: s.fullScaleVolts,
		loadOhms: s.loadOhms,
		sampleCount: s.sampleCount,
		results: s.results as SnapshotResults,
		checks: s.checks as Check[],
		spectrum: s.spectrum as SnapshotSpectrum,
		settings: s.settings,
		audioSha256: sha ?? null
	};
}

/** The stored WAV bytes of a snapshot, or null. */
export function getSnapshotAudio(
	db: Db,
	id: number
): { wav: Buffer; sha256: string; label: string; jobId: number } | null {
	const row = db
		.select({
			wav: table.snapshotAudio.wav,
			sha256: table.snapshotAudio.sha256,
			label: table.snapshots.label,
			jobId: table.snapshots.jobId
		})
		.from(table.snapshotAudio)
		.innerJoin(table.snapshots, eq(table.snapshots.id, table.snapshotAudio.snapshotId))
		.where(eq(table.snapshotAudio.snapshotId, id))
		.get();
	return row ?? null;
}
