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
/** Output swing stops this far short of each rail (driver and emitter-resistor losses). */
export const OUTPUT_HEADROOM_V = 3;
/** A weak output device on one half of a channel clips that half at this fraction of the swing. */
export const WEAK_DEVICE_SWING_FRACTION = 0.6;
/** Fixed output offset (V) on the left channel while the dc-offset fault is on. */
export const DC_OFFSET_FAULT_V = 0.12;
/** Inverse-RIAA network loss at 1 kHz (dB), matched by the phono stage gain so line and phono read alike. */
export const PHONO_GAIN_1KHZ_DB = 40;

const gainDb = z.number().min(-EQ_MAX_DB).max(EQ_MAX_DB);

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
	/** A weak output device on one channel: that channel's positive half clips early. */
	weakOutputDevice: ChannelNameSchema.nullable(),
	/** A DC offset on the left output (DC_OFFSET_FAULT_V). */
	dcOffset: z.boolean()
});
export type Faults = z.infer<typeof FaultsSchema>;

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
	railVolts: z.number().min(10).max(100),
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
		dcOffset: false
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
		return swing * WEAK_DEVICE_SWING_FRACTION;
	return swing;
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
			dcOffset: z.boolean().optional()
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

export const ControlMessageSchema = z.discriminatedUnion('type', [
	GeneratorMessageSchema,
	InputMessageSchema,
	LoadMessageSchema,
	SimMessageSchema,
	TempsAfterMessageSchema
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
	serverTimeMs: z.number()
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

export const ERROR_CODES = [
	'bad-json',
	'bad-message',
	'unsupported',
	'binary-not-accepted',
	'rate-limited',
	'out-of-range'
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
	StatsMessageSchema
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
