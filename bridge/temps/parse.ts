// Reads one line from a serial temperature logger: one or more `probe=value` pairs
// (separated by commas, semicolons or spaces), value in °C (bare, `C` or `°C`), °F (`F` or
// `°F`), or type K thermocouple millivolts (`mV`). A pair `cj=VALUE` sets the cold-junction
// temperature used for later millivolt readings (0 °C until a logger sends one).
import { fahrenheitToCelsius } from '../../src/lib/dsp/units';
import { PROBE_IDS, type ProbeId } from '../../src/lib/bridge/protocol';
import { typeKCompensated } from './typek';

export const MAX_LINE_CHARS = 256;
/** Plausible bench temperatures; anything outside is a wiring or logger fault. */
export const MIN_PLAUSIBLE_C = -40;
export const MAX_PLAUSIBLE_C = 400;

export interface LoggerContext {
	coldJunctionC: number;
}

export type LineResult =
	| { ok: true; readings: { probe: ProbeId; celsius: number }[] }
	| { ok: false; error: string }
	| { ok: true; readings: []; empty: true };

const PAIR = /^([a-z][a-z0-9-]{0,31})=([+-]?(?:\d+\.?\d*|\.\d+)(?:e[+-]?\d+)?)\s*(°?c|°?f|mv)?$/i;

export function parseLoggerLine(raw: string, ctx: LoggerContext): LineResult {
	if (raw.length > MAX_LINE_CHARS) return { ok: false, error: 'line too long' };
	const line = raw.replace(/\r$/, '').trim();
	if (line === '' || line.startsWith('#')) return { ok: true, readings: [], empty: true };
	// Allow "probe = 45.1 °C" by removing spaces around '=' and before a unit.
	const normalised = line.replace(/\s*=\s*/g, '=').replace(/(\d)\s+(°?[cCfF]\b|mV\b|mv\b)/g, '$1$2');
	const parts = normalised.split(/[,;\s]+/).filter(Boolean);
	const readings: { probe: ProbeId; celsius: number }[] = [];
	let cj: number | null = null;
	for (const part of parts) {
		const m = PAIR.exec(part);
		if (!m) return { ok: false, error: `cannot read "${part.slice(0, 40)}"` };
		const name = m[1].toLowerCase();
		const value = Number(m[2]);
		const unit = (m[3] ?? 'c').toLowerCase().replace('°', '');
		if (!Number.isFinite(value)) return { ok: false, error: `bad number in "${part.slice(0, 40)}"` };
		let celsius: number;
		if (unit === 'f') celsius = fahrenheitToCelsius(value);
		else if (unit === 'mv') {
			try {
				celsius = typeKCompensated(value, cj ?? ctx.coldJunctionC);
			} catch (e) {
				return { ok: false, error: (e as Error).message };
			}
		} else celsius = value;
		if (!(celsius >= MIN_PLAUSIBLE_C && celsius <= MAX_PLAUSIBLE_C))
			return {
				ok: false,
				error: `${celsius.toFixed(1)} °C is outside ${MIN_PLAUSIBLE_C}–${MAX_PLAUSIBLE_C} °C`
			};
		if (name === 'cj') {
			if (unit === 'mv') return { ok: false, error: 'cold junction must be given in °C or °F' };
			cj = celsius;
			continue;
		}
		if (!(PROBE_IDS as readonly string[]).includes(name))
			return { ok: false, error: `unknown probe "${name}" (expected ${PROBE_IDS.join(', ')})` };
		readings.push({ probe: name as ProbeId, celsius: Math.round(celsius * 100) / 100 });
	}
	if (cj !== null) ctx.coldJunctionC = cj;
	return { ok: true, readings };
}
