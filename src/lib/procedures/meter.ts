// Front-panel meter check: the generator steps the unit through output powers; at each the
// technician types what the unit's own power meter shows. Measured power is P = V²/R into the
// stated load; the meter's error is given in dB (10·lg of the power ratio) and in percent.
import { wattsInto } from './max-power';

/** Output powers offered by default (W), capped at the unit's rating when it is known. */
export const METER_DEFAULT_POWERS_W = [0.1, 0.5, 1, 5, 10, 25, 50, 100] as const;

export function meterPowers(
	ratedPowerW: number | null,
	powersW: readonly number[] = METER_DEFAULT_POWERS_W
): number[] {
	return powersW.filter((p) => p > 0 && (ratedPowerW === null || p <= ratedPowerW));
}

export interface MeterStep {
	/** Power asked for, W. */
	targetW: number;
	/** Generator level used, V rms. */
	generatorVrms: number;
	/** Output read on the metered channel, V rms. */
	outputVrms: number;
	/** What the unit's meter showed, W (null: the meter did not move / could not be read). */
	indicatedW: number | null;
}

export interface MeterPoint {
	measuredW: number;
	indicatedW: number | null;
	/** 10·lg(indicated / measured): + reads high, − reads low. */
	errorDb: number | null;
	/** (indicated − measured) / measured · 100. */
	errorPercent: number | null;
}

export interface MeterResult {
	points: MeterPoint[];
	/** Largest |error| over the read points, dB and %. */
	maxErrorDb: number | null;
	maxErrorPercent: number | null;
}

export function evaluateMeter(steps: readonly MeterStep[], loadOhms: number): MeterResult {
	if (!(loadOhms > 0)) throw new RangeError('the meter check needs the load in ohms');
	const points = steps.map((s): MeterPoint => {
		const measuredW = wattsInto(s.outputVrms, loadOhms);
		const ok = s.indicatedW !== null && s.indicatedW > 0 && measuredW > 0;
		return {
			measuredW,
			indicatedW: s.indicatedW,
			errorDb: ok ? 10 * Math.log10(s.indicatedW! / measuredW) : null,
			errorPercent: ok ? ((s.indicatedW! - measuredW) / measuredW) * 100 : null
		};
	});
	const dbs = points.map((p) => p.errorDb).filter((v): v is number => v !== null);
	const pcs = points.map((p) => p.errorPercent).filter((v): v is number => v !== null);
	return {
		points,
		maxErrorDb: dbs.length ? Math.max(...dbs.map(Math.abs)) : null,
		maxErrorPercent: pcs.length ? Math.max(...pcs.map(Math.abs)) : null
	};
}

/** Generator level that should give `targetW` into `loadOhms` with a unit of voltage gain `gain`. */
export function levelForPower(targetW: number, loadOhms: number, gain: number): number {
	return Math.sqrt(targetW * loadOhms) / gain;
}
