// The bench-bridge wire protocol, shared by the bridge process and the browser: JSON message
// types and zod schemas for both directions, the simulator's settings, and (re-exported)
// the binary sample-frame codec. See bridge/README.md for the prose description.
import { z } from 'zod';

export * from './frame';

/** Bumped on any incompatible change to messages or frames; the hello carries it. */
export const PROTOCOL_VERSION = 1;
/** Version field every client→bridge control message must carry. */
export const CONTROL_VERSION = 1;
/** Largest control message the bridge accepts (bytes); larger ones close the socket (1009). */
export const CONTROL_MAX_BYTES = 4096;
/** WebSocket path on the bridge; the token travels as `?token=`. */
export const BRIDGE_STREAM_PATH = '/stream';
export const DEFAULT_BRIDGE_PORT = 8787;
/** Open streams one user may hold at once (the bridge's default; `--clients-per-user`). */
export const DEFAULT_CLIENTS_PER_USER = 3;

// WebSocket close codes the bridge uses (4000–4999 is the application range, RFC 6455 §7.4.2);
// the reason text is what the page shows.
/** The stream's token ran out without a renewal: the session ended or the user lost access. */
export const CLOSE_SESSION_ENDED = 4401;
export const CLOSE_SESSION_ENDED_REASON = 'your session ended; sign in again';
/** This user already holds the most streams allowed. */
export const CLOSE_TOO_MANY_FOR_USER = 4429;
export const closeTooManyForUserReason = (limit: number): string =>
	`you already have ${limit} bridge connections open (the limit); close another bench or soak tab`;

// ── shared vocabulary ──────────────────────────────────────────────────────────

export const CHANNEL_NAMES = ['left', 'right'] as const;
export const ChannelNameSchema = z.enum(CHANNEL_NAMES);
export type ChannelName = z.infer<typeof ChannelNameSchema>;

export const INPUTS = ['line', 'phono'] as const;
export const InputSchema = z.enum(INPUTS);
export type InputName = z.infer<typeof InputSchema>;

export const SOURCE_KINDS = ['sim', 'wav', 'cmd'] as const;
export type SourceKind = (typeof SOURCE_KINDS)[number];
export const TEMPS_KINDS = ['sim', 'serial', 'none'] as const;
export type TempsKind = (typeof TEMPS_KINDS)[number];

export const PROBE_IDS = ['heatsink-left', 'heatsink-right', 'transformer', 'ambient'] as const;
export const ProbeIdSchema = z.enum(PROBE_IDS);
export type ProbeId = z.infer<typeof ProbeIdSchema>;
export const PROBE_KINDS = ['heatsink', 'transformer', 'ambient', 'other'] as const;
export type ProbeKind = (typeof PROBE_KINDS)[number];

export interface ProbeInfo {
	id: ProbeId;
	label: string;
	kind: ProbeKind;
}

export const PROBES: readonly ProbeInfo[] = [
	{ id: 'heatsink-left', label: 'Heatsink L', kind: 'heatsink' },
	{ id: 'heatsink-right', label: 'Heatsink R', kind: 'heatsink' },
	{ id: 'transformer', label: 'Transformer', kind: 'transformer' },
	{ id: 'ambient', label: 'Ambient', kind: 'ambient' }
];

// ── generator ──────────────────────────────────────────────────────────────────
// Levels are in V rms at the generator output. For multi-tone signals (twin-tone, SMPTE)
// `levelVrms` is the peak-equivalent sine level: the composite's peak is levelVrms·√2.
// Noise: `levelVrms` is the rms of the noise over the full band (0 to Nyquist).

export const GENERATOR_MAX_VRMS = 10;
export const GENERATOR_MAX_HZ = 96_000;
/** The longest deadman a generator message may ask for (a day). */
export const GENERATOR_MAX_OFF_AFTER_S = 24 * 3600;
const level = z.number().min(0).max(GENERATOR_MAX_VRMS);
const freq = z.number().min(1).max(GENERATOR_MAX_HZ);
/** Which simulator input channels the generator drives (one-sided drive measures crosstalk). */
export const DriveSchema = z.enum(['both', 'left', 'right']);
export type Drive = z.infer<typeof DriveSchema>;

export const GeneratorSchema = z.discriminatedUnion('kind', [
	z.strictObject({ kind: z.literal('off') }),
	z.strictObject({
		kind: z.literal('sine'),
		frequencyHz: freq,
		levelVrms: level,
		drive: DriveSchema.optional()
	}),
	z.strictObject({
		kind: z.literal('twin-tone'),
		f1Hz: freq,
		f2Hz: freq,
		levelVrms: level,
		drive: DriveSchema.optional()
	}),
	z.strictObject({
		kind: z.literal('smpte'),
		lowHz: freq,
		highHz: freq,
		/** Amplitude ratio low:high, 4 for the usual 4:1. */
		ratio: z.number().min(1).max(16),
		levelVrms: level,
		drive: DriveSchema.optional()
	}),
	z.strictObject({
		kind: z.literal('noise'),
		levelVrms: level,
		color: z.enum(['white', 'pink']).optional(),
		drive: DriveSchema.optional()
	})
]);
export type GeneratorState = z.infer<typeof GeneratorSchema>;
export const GENERATOR_OFF: GeneratorState = { kind: 'off' };

// ── simulator ──────────────────────────────────────────────────────────────────

/** Octave centres of the simulator's 10-band graphic EQ (Hz). */
export const EQ_BAND_CENTRES_HZ = [31.5, 63, 125, 250, 500, 1000, 2000, 4000, 8000, 16000] as const;
export const EQ_MAX_DB = 12;
export const VOLUME_MIN_DB = -80;
export const VOLUME_MAX_DB = 40;
/** Allowed supply rails (±V). */
export const RAIL_MIN_V = 10;
export const RAIL_MAX_V = 100;
/** Output swing stops this far short of each rail (driver and emitter-resistor losses). */
export const OUTPUT_HEADROOM_V = 3;
/**
 * A weak output device (low current gain) on one channel's positive half cannot deliver more
 * than this load current, so that half clips at WEAK_DEVICE_MAX_CURRENT_A × loadOhms (12 V peak
 * into 8 Ω: 9 W of clean sine, where a healthy channel gives 95 W).
 */
export const WEAK_DEVICE_MAX_CURRENT_A = 1.5;
/** Largest DC offset the dc-offset fault may be set to (mV, either sign). */
export const DC_OFFSET_MAX_MV = 2000;
/** The phono stage's own output swing (V peak, a ±15 V op-amp stage): a hot input clips it. */
export const PHONO_STAGE_CLIP_V = 12;
/** A heat-tripped protection relay closes again once both heatsinks are this much below the trip point. */
export const RELAY_RESET_HYSTERESIS_C = 10;
/** Inverse-RIAA network loss at 1 kHz (dB), matched by the phono stage gain so line and phono read alike. */
export const PHONO_GAIN_1KHZ_DB = 40;

const gainDb = z.number().min(-EQ_MAX_DB).max(EQ_MAX_DB);

export const ProtectionRelaySchema = z.strictObject({
	enabled: z.boolean(),
	/** Opens when either heatsink reaches this temperature (needs the simulated temperatures). */
	tripCelsius: z.number().min(30).max(150),
	/** Or opens this many simulated (time-scaled) seconds after the fault is switched on; null = no timer. */
	tripAfterS: z
		.number()
		.min(0)
		.max(24 * 3600)
		.nullable()
});
export type ProtectionRelay = z.infer<typeof ProtectionRelaySchema>;

export const FaultsSchema = z.strictObject({
	/** A dirty selector contact on one channel: raised noise floor and crackle there. */
	noisySelector: ChannelNameSchema.nullable(),
	/** A worn slider on one EQ band: random level jumps on that band while `moving`. */
	scratchyControl: z.strictObject({
		enabled: z.boolean(),
		moving: z.boolean(),
		band: z
			.int()
			.min(0)
			.max(EQ_BAND_CENTRES_HZ.length - 1)
	}),
	/** A dried-out reservoir capacitor: much more ripple hum at 2× mains and its harmonics. */
	tiredFilterCap: z.boolean(),
	/** Bias drifted low: the effective bias falls to a fraction of the setting (crossover distortion). */
	underBias: z.boolean(),
	/** A weak output device on one channel: that channel's positive half current-limits (WEAK_DEVICE_MAX_CURRENT_A). */
	weakOutputDevice: ChannelNameSchema.nullable(),
	/** A DC offset of `dcOffsetMv` on the left output. */
	dcOffset: z.boolean(),
	/** The offset the dc-offset fault puts on the left output, mV. */
	dcOffsetMv: z.number().min(-DC_OFFSET_MAX_MV).max(DC_OFFSET_MAX_MV),
	/** The speaker protection relay opens: hot heatsinks (or a timer) cut the output off the load. */
	protectionRelay: ProtectionRelaySchema
});
export type Faults = z.infer<typeof FaultsSchema>;
export type FaultName = keyof Faults;

/**
 * What each fault does and exactly when it shows, for the simulator panel and the README.
 * Every statement is checked against the simulator's output in bridge/sim/faults.test.ts.
 */
export const FAULT_HELP: Record<Exclude<FaultName, 'dcOffsetMv'>, string> = {
	noisySelector:
		"A dirty selector contact on one channel: that channel's noise rises by more than 20 dB (about 28 dB at the default volume) and it crackles, with or without signal; the other channel stays clean.",
	scratchyControl:
		'A worn slider on one EQ band: while "being moved" is on, the level at that band jumps by up to 12 dB every few tens of ms and crackles; left alone it reads steady.',
	tiredFilterCap:
		'A dried-out reservoir capacitor: ripple hum at twice the mains frequency (100 or 120 Hz) and its even harmonics rises 32 dB at idle and about 4 dB more at 12 W into 8 Ω; hum at the mains frequency rises about 10 dB.',
	underBias:
		'Bias drifted low (15 % of the setting): crossover distortion, worst at low levels: THD above 0.05 % at 1 W into 8 Ω, where a healthy unit reads under 0.01 %; at tens of watts it adds little to what the output stage shows anyway.',
	weakOutputDevice: `One channel's positive half cannot deliver more than ${WEAK_DEVICE_MAX_CURRENT_A} A, so it clips early: at 12 W into 8 Ω THD+N on that channel rises above 1 % (about 4.5 %) while the other reads about 0.015 %; below about 8 W into 8 Ω (4 W into 4 Ω) it reads healthy.`,
	dcOffset:
		'A DC offset on the left output, of the set millivolts, always present (with or without signal). Only a DC-coupled analyzer input can read it.',
	protectionRelay: `The speaker relay opens: the output drops to the analyzer's floor (more than 80 dB down) the moment either heatsink reaches the trip temperature (simulated temperatures only) or, with a timer set, that many simulated seconds after the fault is switched on. A heat trip closes again once both heatsinks are ${RELAY_RESET_HYSTERESIS_C} °C below the trip point; a timer trip stays open until the fault is switched off.`
};

const filterSchema = (minHz: number, maxHz: number) =>
	z.strictObject({ enabled: z.boolean(), frequencyHz: z.number().min(minHz).max(maxHz) });

export const SimulatorStateSchema = z.strictObject({
	input: InputSchema,
	/** When the phono input is selected, the generator reaches it through an inverse-RIAA network. */
	inverseRiaaNetwork: z.boolean(),
	/** Gain from the (line-equivalent) input to the load at 1 kHz with EQ flat and filters off. */
	volumeDb: z.number().min(VOLUME_MIN_DB).max(VOLUME_MAX_DB),
	/** One gain per EQ_BAND_CENTRES_HZ band (peaking, Q ≈ 1.4). */
	eqGainsDb: z.array(gainDb).length(EQ_BAND_CENTRES_HZ.length),
	/** Subsonic / rumble high-pass, 12 dB/octave. */
	lowFilter: filterSchema(10, 200),
	/** Hiss low-pass, 12 dB/octave. */
	highFilter: filterSchema(2000, 20000),
	/** Output-stage quiescent current as a percentage of the correct setting. */
	biasPercent: z.number().min(0).max(200),
	mainsHz: z.union([z.literal(50), z.literal(60)]),
	loadOhms: z.number().min(1).max(1000),
	/** Supply rails ±railVolts; the clip point is railVolts − OUTPUT_HEADROOM_V (peak). */
	railVolts: z.number().min(RAIL_MIN_V).max(RAIL_MAX_V),
	faults: FaultsSchema
});
export type SimulatorState = z.infer<typeof SimulatorStateSchema>;

export const DEFAULT_SIMULATOR_STATE: SimulatorState = {
	input: 'line',
	inverseRiaaNetwork: true,
	volumeDb: 26,
	eqGainsDb: [0, 0, 0, 0, 0, 0, 0, 0, 0, 0],
	lowFilter: { enabled: false, frequencyHz: 20 },
	highFilter: { enabled: false, frequencyHz: 10000 },
	biasPercent: 100,
	mainsHz: 50,
	loadOhms: 8,
	railVolts: 42,
	faults: {
		noisySelector: null,
		scratchyControl: { enabled: false, moving: false, band: 5 },
		tiredFilterCap: false,
		underBias: false,
		weakOutputDevice: null,
		dcOffset: false,
		dcOffsetMv: 120,
		protectionRelay: { enabled: false, tripCelsius: 50, tripAfterS: null }
	}
};

/** Peak clip voltage of a channel's positive (+) or negative (−) half for a simulator state. */
export function clipVoltsPeak(
	state: SimulatorState,
	channel: ChannelName,
	half: 'positive' | 'negative' = 'positive'
): number {
	const swing = state.railVolts - OUTPUT_HEADROOM_V;
	if (half === 'positive' && state.faults.weakOutputDevice === channel)
		return Math.min(swing, WEAK_DEVICE_MAX_CURRENT_A * state.loadOhms);
	return swing;
}

/**
 * Supply rails that make the simulator's clean-sine maximum `powerW` into `loadOhms`
 * (P = V²/(2R) at the clip voltage, plus OUTPUT_HEADROOM_V), so it can stand in for a unit of
 * that rating. Clamped to the allowed rail range.
 */
export function railVoltsForPowerW(powerW: number, loadOhms: number): number {
	const v = Math.sqrt(2 * powerW * loadOhms) + OUTPUT_HEADROOM_V;
	return Math.min(RAIL_MAX_V, Math.max(RAIL_MIN_V, v));
}

/** Largest clean sine power into the load (P = V²/R with V the rms of the clip-point sine). */
export function maxSinePowerW(state: SimulatorState, channel: ChannelName = 'left'): number {
	const vPeak = Math.min(
		clipVoltsPeak(state, channel, 'positive'),
		clipVoltsPeak(state, channel, 'negative')
	);
	return (vPeak * vPeak) / 2 / state.loadOhms;
}

// ── client → bridge control messages ──────────────────────────────────────────

const id = z.union([z.string().max(64), z.number()]).optional();
const v = z.literal(CONTROL_VERSION);

export const GeneratorMessageSchema = z.strictObject({
	v,
	id,
	type: z.literal('generator'),
	generator: GeneratorSchema,
	/**
	 * Deadman: the bridge turns the generator off by itself after this many seconds of wall
	 * time unless a later generator message replaces it, so a closed page cannot leave a unit driven.
	 */
	offAfterS: z.number().positive().max(GENERATOR_MAX_OFF_AFTER_S).optional()
});
export const InputMessageSchema = z.strictObject({ v, id, type: z.literal('input'), input: InputSchema });
export const LoadMessageSchema = z.strictObject({
	v,
	id,
	type: z.literal('load'),
	loadOhms: SimulatorStateSchema.shape.loadOhms
});

/** Partial simulator settings; anything absent stays as it is. */
export const SimMessageSchema = z.strictObject({
	v,
	id,
	type: z.literal('sim'),
	input: InputSchema.optional(),
	inverseRiaaNetwork: z.boolean().optional(),
	volumeDb: SimulatorStateSchema.shape.volumeDb.optional(),
	eqGainsDb: SimulatorStateSchema.shape.eqGainsDb.optional(),
	/** Set one EQ band (applied after eqGainsDb when both are present). */
	eqBand: z
		.strictObject({
			index: z
				.int()
				.min(0)
				.max(EQ_BAND_CENTRES_HZ.length - 1),
			gainDb
		})
		.optional(),
	lowFilter: filterSchema(10, 200).partial().optional(),
	highFilter: filterSchema(2000, 20000).partial().optional(),
	biasPercent: SimulatorStateSchema.shape.biasPercent.optional(),
	mainsHz: SimulatorStateSchema.shape.mainsHz.optional(),
	loadOhms: SimulatorStateSchema.shape.loadOhms.optional(),
	railVolts: SimulatorStateSchema.shape.railVolts.optional(),
	faults: z
		.strictObject({
			noisySelector: FaultsSchema.shape.noisySelector.optional(),
			scratchyControl: FaultsSchema.shape.scratchyControl.partial().optional(),
			tiredFilterCap: z.boolean().optional(),
			underBias: z.boolean().optional(),
			weakOutputDevice: FaultsSchema.shape.weakOutputDevice.optional(),
			dcOffset: z.boolean().optional(),
			dcOffsetMv: FaultsSchema.shape.dcOffsetMv.optional(),
			protectionRelay: ProtectionRelaySchema.partial().optional()
		})
		.optional()
});

/** Ask for every stored temperature reading with a sequence number greater than `seq`. */
export const TempsAfterMessageSchema = z.strictObject({
	v,
	id,
	type: z.literal('temps-after'),
	seq: z.number().int().min(-1).max(Number.MAX_SAFE_INTEGER)
});

/** Longest bridge token the bridge reads (a real one is about 300 characters). */
export const BRIDGE_TOKEN_MAX_CHARS = 2048;

/**
 * Renew this stream's authorisation with a freshly minted token (GET /api/bridge-token) before
 * the current one expires; it must name the same user and session. Unrenewed streams are closed
 * at expiry with CLOSE_SESSION_ENDED.
 */
export const RenewMessageSchema = z.strictObject({
	v,
	id,
	type: z.literal('renew'),
	token: z.string().min(1).max(BRIDGE_TOKEN_MAX_CHARS)
});

export const ControlMessageSchema = z.discriminatedUnion('type', [
	GeneratorMessageSchema,
	InputMessageSchema,
	LoadMessageSchema,
	SimMessageSchema,
	TempsAfterMessageSchema,
	RenewMessageSchema
]);
export type ControlMessage = z.infer<typeof ControlMessageSchema>;
export type SimMessage = z.infer<typeof SimMessageSchema>;

/** Apply a partial `sim` message to a simulator state (pure; returns a new validated state). */
export function applySimPatch(
	state: SimulatorState,
	patch: Omit<SimMessage, 'v' | 'id' | 'type'>
): SimulatorState {
	const next: SimulatorState = structuredClone(state);
	if (patch.input !== undefined) next.input = patch.input;
	if (patch.inverseRiaaNetwork !== undefined) next.inverseRiaaNetwork = patch.inverseRiaaNetwork;
	if (patch.volumeDb !== undefined) next.volumeDb = patch.volumeDb;
	if (patch.eqGainsDb !== undefined) next.eqGainsDb = [...patch.eqGainsDb];
	if (patch.eqBand !== undefined) next.eqGainsDb[patch.eqBand.index] = patch.eqBand.gainDb;
	if (patch.lowFilter) next.lowFilter = { ...next.lowFilter, ...patch.lowFilter };
	if (patch.highFilter) next.highFilter = { ...next.highFilter, ...patch.highFilter };
	if (patch.biasPercent !== undefined) next.biasPercent = patch.biasPercent;
	if (patch.mainsHz !== undefined) next.mainsHz = patch.mainsHz;
	if (patch.loadOhms !== undefined) next.loadOhms = patch.loadOhms;
	if (patch.railVolts !== undefined) next.railVolts = patch.railVolts;
	const f = patch.faults;
	if (f) {
		if (f.noisySelector !== undefined) next.faults.noisySelector = f.noisySelector;
		if (f.scratchyControl)
			next.faults.scratchyControl = { ...next.faults.scratchyControl, ...f.scratchyControl };
		if (f.tiredFilterCap !== undefined) next.faults.tiredFilterCap = f.tiredFilterCap;
		if (f.underBias !== undefined) next.faults.underBias = f.underBias;
		if (f.weakOutputDevice !== undefined) next.faults.weakOutputDevice = f.weakOutputDevice;
		if (f.dcOffset !== undefined) next.faults.dcOffset = f.dcOffset;
		if (f.dcOffsetMv !== undefined) next.faults.dcOffsetMv = f.dcOffsetMv;
		if (f.protectionRelay)
			next.faults.protectionRelay = { ...next.faults.protectionRelay, ...f.protectionRelay };
	}
	return SimulatorStateSchema.parse(next);
}

export interface Issue {
	path: string;
	message: string;
}

/** Parse a control message from raw text (or an already-parsed value); never throws. */
export function parseControlMessage(
	raw: unknown
): { ok: true; message: ControlMessage } | { ok: false; error: string; issues?: Issue[] } {
	let value: unknown = raw;
	if (typeof raw === 'string') {
		if (raw.length > CONTROL_MAX_BYTES)
			return { ok: false, error: `control message longer than ${CONTROL_MAX_BYTES} bytes` };
		try {
			value = JSON.parse(raw);
		} catch {
			return { ok: false, error: 'control message is not valid JSON' };
		}
	}
	if (typeof value !== 'object' || value === null || Array.isArray(value))
		return { ok: false, error: 'control message must be a JSON object' };
	const rec = value as Record<string, unknown>;
	if (rec.v !== CONTROL_VERSION)
		return {
			ok: false,
			error: `unsupported control message version ${JSON.stringify(rec.v)}; this bridge speaks v${CONTROL_VERSION}`
		};
	const parsed = ControlMessageSchema.safeParse(value);
	if (!parsed.success) {
		const issues = parsed.error.issues.map((i) => ({ path: i.path.join('.'), message: i.message }));
		const type = typeof rec.type === 'string' ? rec.type.slice(0, 40) : '?';
		return { ok: false, error: `invalid "${type}" control message`, issues };
	}
	return { ok: true, message: parsed.data };
}

// ── bridge → client messages ───────────────────────────────────────────────────

export const TempReadingSchema = z.object({
	probe: ProbeIdSchema,
	/** Monotone across bridge restarts: starts at the bridge's boot wall-clock ms, +1 per reading. */
	seq: z.number().int(),
	/** Wall-clock time of the reading, ms since the Unix epoch. */
	t: z.number(),
	celsius: z.number()
});
export type TempReading = z.infer<typeof TempReadingSchema>;

const ProbeInfoSchema = z.object({ id: ProbeIdSchema, label: z.string(), kind: z.enum(PROBE_KINDS) });

export const HelloMessageSchema = z.object({
	type: z.literal('hello'),
	protocolVersion: z.number().int(),
	/** Random per bridge start; a change means the bridge restarted (mark a gap). */
	bootId: z.string(),
	sampleRateHz: z.number().int(),
	channels: z.number().int(),
	/** Samples per frame the source produces. */
	blockSize: z.number().int(),
	/** Peak volts represented by sample value 1.0, per channel. */
	fullScaleVolts: z.array(z.number()),
	source: z.enum(SOURCE_KINDS),
	/** Human description: "simulator (seed 1)", a file name or the command. */
	sourceLabel: z.string(),
	temps: z.enum(TEMPS_KINDS),
	probes: z.array(ProbeInfoSchema),
	/** Present only for the simulator source. */
	simulator: SimulatorStateSchema.optional(),
	seed: z.number().int().optional(),
	generator: GeneratorSchema,
	/** Simulated (thermal) seconds per wall-clock second. */
	timeScale: z.number(),
	/** Highest temperature sequence number stored so far (null before the first reading). */
	lastTempSeq: z.number().int().nullable(),
	serverTimeMs: z.number(),
	/**
	 * True when the source's input passes DC (the simulator; a capture command started with
	 * --dc-coupled), so a DC-offset reading means something. Most audio interfaces block DC: a
	 * bridge that does not say so is taken as AC-coupled.
	 */
	dcCoupled: z.boolean().default(false),
	/**
	 * When this stream's token runs out (ms epoch, the bridge's clock; compare with serverTimeMs).
	 * Send `renew` before then or the bridge closes the stream with CLOSE_SESSION_ENDED.
	 */
	tokenExpiresAtMs: z.number().optional()
});
export type HelloMessage = z.infer<typeof HelloMessageSchema>;

export const TempsMessageSchema = z.object({
	type: z.literal('temps'),
	bootId: z.string(),
	readings: z.array(TempReadingSchema),
	/** Present on answers to `temps-after`. */
	backfill: z.boolean().optional(),
	/** On backfill answers: true on the last chunk. */
	complete: z.boolean().optional(),
	/** On backfill answers: the oldest seq still held; older readings are gone. */
	oldestSeq: z.number().int().nullable().optional(),
	replyTo: z.union([z.string(), z.number()]).optional()
});
export type TempsMessage = z.infer<typeof TempsMessageSchema>;

export const StateMessageSchema = z.object({
	type: z.literal('state'),
	generator: GeneratorSchema,
	simulator: SimulatorStateSchema.optional(),
	/** Load the thermal model assumes (the simulator's load, or the last `load` message). */
	loadOhms: z.number(),
	replyTo: z.union([z.string(), z.number()]).optional()
});
export type StateMessage = z.infer<typeof StateMessageSchema>;

/** The answer to an accepted `renew`: the stream now lives until tokenExpiresAtMs. */
export const RenewedMessageSchema = z.object({
	type: z.literal('renewed'),
	/** ms epoch, the bridge's clock. */
	tokenExpiresAtMs: z.number(),
	serverTimeMs: z.number(),
	/** The role the renewed token carries (a changed role takes effect here). */
	role: z.string(),
	replyTo: z.union([z.string(), z.number()]).optional()
});
export type RenewedMessage = z.infer<typeof RenewedMessageSchema>;

export const ERROR_CODES = [
	'bad-json',
	'bad-message',
	'unsupported',
	'binary-not-accepted',
	'rate-limited',
	'out-of-range',
	/** A temps-after arrived while this client's previous backfill is still being sent. */
	'busy',
	/** A renew token that does not verify, or names another user or session. */
	'renew-refused'
] as const;
export const ErrorMessageSchema = z.object({
	type: z.literal('error'),
	code: z.enum(ERROR_CODES),
	message: z.string(),
	issues: z.array(z.object({ path: z.string(), message: z.string() })).optional(),
	replyTo: z.union([z.string(), z.number()]).optional()
});
export type ErrorMessage = z.infer<typeof ErrorMessageSchema>;

export const StatsMessageSchema = z.object({
	type: z.literal('stats'),
	/** Frames sent to this client / dropped for it because it could not keep up. */
	framesSent: z.number().int(),
	framesDropped: z.number().int(),
	bytesSent: z.number(),
	/** Control messages from this client that were refused. */
	controlRejected: z.number().int(),
	/** Serial-logger lines that could not be read (bridge-wide). */
	tempsBadLines: z.number().int(),
	/** Blocks the source itself lost (bridge-wide): late timers, a stalled capture command. */
	sourceOverruns: z.number().int(),
	uptimeS: z.number()
});
export type StatsMessage = z.infer<typeof StatsMessageSchema>;

export const BridgeMessageSchema = z.discriminatedUnion('type', [
	HelloMessageSchema,
	TempsMessageSchema,
	StateMessageSchema,
	ErrorMessageSchema,
	StatsMessageSchema,
	RenewedMessageSchema
]);
export type BridgeMessage = z.infer<typeof BridgeMessageSchema>;

/** Parse a text message from the bridge; never throws. */
export function parseBridgeMessage(
	text: string
): { ok: true; message: BridgeMessage } | { ok: false; error: string } {
	let value: unknown;
	try {
		value = JSON.parse(text);
	} catch {
		return { ok: false, error: 'bridge message is not valid JSON' };
	}
	const parsed = BridgeMessageSchema.safeParse(value);
	if (!parsed.success)
		return { ok: false, error: `unexpected bridge message: ${parsed.error.issues[0]?.message ?? 'invalid'}` };
	return { ok: true, message: parsed.data };
}

/** The WebSocket URL for a bridge base URL (ws://host:port) and a token. */
export function bridgeStreamUrl(bridgeUrl: string, token: string): string {
	const u = new URL(bridgeUrl);
	u.pathname = BRIDGE_STREAM_PATH;
	u.search = '';
	u.searchParams.set('token', token);
	return u.toString();
}
