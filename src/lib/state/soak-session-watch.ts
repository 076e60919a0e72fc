// The soak page's watch over the unit: temperature limits (the live breach check), THD+N sampled
// into the record and judged against the ceiling, the output dropping out while driven (a
// protection relay opening reads as a sudden loss of level), and DC offset drift where the input
// is DC-coupled. Plain TypeScript: it decides, the session acts.
import {
	LiveBreachWatch,
	soakSeconds,
	type Breach,
	type SoakClock,
	type SoakReadingIn,
	type ThdnSample
} from '$lib/soak/verdict';
import type { SoakLimits } from '$lib/soak/soak-limits';
import { thdnDbToPercent } from '$lib/soak/soak-limits';
import type { SoakChannel } from '$lib/soak/presets';
import { formatSoakTime } from '$lib/soak/temperature';
import { probeLabel } from '$lib/soak/probes';
import { channelIndex } from './soak-session-drive';

export const THDN_SAMPLE_EVERY_MS = 10_000;
/** A fall of more than this within the dropout window ends the run (a relay opening, common practice). */
export const DROPOUT_DB = 20;
export const DROPOUT_WINDOW_MS = 2000;
/** DC offset is logged at least this often, and whenever it moves by the step below. */
export const DC_LOG_EVERY_MS = 60_000;
export const DC_LOG_STEP_V = 0.01;

export interface MeasuredOutput {
	levelVrms: readonly (number | null)[];
	powerW: readonly (number | null)[];
	thdnPercent: readonly (number | null)[];
	dcVolts?: readonly (number | null)[];
	/** Per channel: whether the waveform clips, and why (flat tops, crest factor). */
	clipping?: readonly ({ clipped: boolean; reason: string | null } | null)[];
	atMs: number;
}

export interface WatchedRun {
	startedAt: number;
	timeScale: number;
	driveVrms: number;
	channels: readonly SoakChannel[];
}

export interface ThdnRecord {
	t: number;
	channel: SoakChannel;
	thdnPercent: number;
	outputW: number | null;
	outputVrms: number | null;
}

export class SoakWatch {
	readonly #temps: LiveBreachWatch;
	readonly #clock: SoakClock;
	#thdn: ThdnSample[] = [];
	#lastThdnAt = 0;
	/** Recent driven-channel levels: the dropout is judged against the highest of the last window. */
	#levels: { atMs: number; levels: (number | null)[] }[] = [];
	#lastDc: { atMs: number; volts: number }[] = [];

	constructor(
		readonly run: WatchedRun,
		readonly limits: SoakLimits
	) {
		this.#clock = { startedAtMs: run.startedAt, timeScale: run.timeScale };
		this.#temps = new LiveBreachWatch(limits, this.#clock);
	}

	/** THD+N samples the record already holds (a resumed run). */
	seedThdn(samples: readonly ThdnSample[]): void {
		this.#thdn.push(...samples);
	}

	addReading(r: SoakReadingIn): void {
		this.#temps.add(r);
	}

	/** Breaches brought by the readings added since the last check, and THD+N over all samples. */
	check(): Breach[] {
		return this.#temps.check(this.#thdn);
	}

	/**
	 * A THD+N sample to record (the worst driven channel), every few seconds while the output is
	 * on target and at once when it is over the ceiling; null when there is nothing to record.
	 */
	thdnSample(
		m: MeasuredOutput,
		onTarget: boolean,
		nowMs: number
	): { record: ThdnRecord; over: boolean } | null {
		if (!onTarget) return null;
		const values = this.run.channels
			.map((c) => ({
				channel: c,
				thdn: m.thdnPercent[channelIndex(c)],
				powerW: m.powerW[channelIndex(c)],
				vrms: m.levelVrms[channelIndex(c)]
			}))
			.filter((v): v is typeof v & { thdn: number } => v.thdn !== null);
		if (!values.length) return null;
		const worst = values.reduce((a, b) => (b.thdn > a.thdn ? b : a));
		const ceilingDb = this.limits.thdnCeilingDb ?? null;
		const over = ceilingDb !== null && worst.thdn > thdnDbToPercent(ceilingDb);
		if (!over && nowMs - this.#lastThdnAt < THDN_SAMPLE_EVERY_MS) return null;
		this.#lastThdnAt = nowMs;
		const record = {
			t: nowMs,
			channel: worst.channel,
			thdnPercent: worst.thdn,
			outputW: worst.powerW,
			outputVrms: worst.vrms
		};
		this.noteThdn(record);
		return { record, over };
	}

	/** A THD+N figure recorded outside the sampling (the closing one). */
	noteThdn(r: ThdnRecord): void {
		this.#thdn.push({ t: r.t, thdnPercent: r.thdnPercent, channel: r.channel });
	}

	/**
	 * The output dropping out while driven: a driven channel more than 20 dB below its highest
	 * level of the last two seconds, that level having been near the target (so a servo step or
	 * the drive starting is not a dropout). `driving`: the generator is on at the run's level.
	 */
	dropout(m: MeasuredOutput, driving: boolean): Breach | null {
		if (!driving) {
			this.#levels = [];
			return null;
		}
		const now = m.atMs;
		this.#levels = this.#levels.filter((x) => now - x.atMs <= DROPOUT_WINDOW_MS);
		let hit: Breach | null = null;
		for (const c of this.run.channels) {
			const i = channelIndex(c);
			const level = m.levelVrms[i];
			if (level === null) continue;
			const peak = Math.max(0, ...this.#levels.map((x) => x.levels[i] ?? 0));
			if (peak < this.run.driveVrms / 2) continue;
			const dropDb = 20 * Math.log10(peak / Math.max(level, 1e-9));
			if (dropDb > DROPOUT_DB && !hit) {
				const atS = soakSeconds(now, this.#clock);
				hit = {
					kind: 'output-dropout',
					probe: c,
					t: now,
					atS,
					value: dropDb,
					limit: DROPOUT_DB,
					message: `${probeLabel(c)} output fell ${dropDb.toFixed(0)} dB within ${DROPOUT_WINDOW_MS / 1000} s (limit ${DROPOUT_DB} dB) at ${formatSoakTime(atS)}: a protection relay opening or an output fault`
				};
			}
		}
		this.#levels.push({ atMs: now, levels: [...m.levelVrms] });
		return hit;
	}

	/**
	 * DC offset to log per driven channel: only where the input is DC-coupled (an AC-coupled
	 * input reads no DC whatever the output does), every minute and whenever it moves.
	 */
	dcOffset(m: MeasuredOutput, dcCoupled: boolean): { channel: SoakChannel; dcVolts: number }[] {
		if (!dcCoupled || !m.dcVolts) return [];
		const out: { channel: SoakChannel; dcVolts: number }[] = [];
		for (const c of this.run.channels) {
			const i = channelIndex(c);
			const v = m.dcVolts[i];
			if (v === null || v === undefined || !Number.isFinite(v)) continue;
			const last = this.#lastDc[i];
			if (last && m.atMs - last.atMs < DC_LOG_EVERY_MS && Math.abs(v - last.volts) < DC_LOG_STEP_V) continue;
			this.#lastDc[i] = { atMs: m.atMs, volts: v };
			out.push({ channel: c, dcVolts: v });
		}
		return out;
	}
}
