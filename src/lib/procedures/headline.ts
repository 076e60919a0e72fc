// One line per saved procedure for people: the job page, compare and the customer report.
import type { Flatness } from './sweep';

export type ProcedureResultLike =
	| { kind: 'response'; flatness: (Flatness | null)[] }
	| { kind: 'phono'; maxDeviationDb: (number | null)[] }
	| { kind: 'max-power'; crossings: ({ powerW: number } | null)[] }
	| { kind: 'crosstalk'; worstDb: Record<'left-to-right' | 'right-to-left', number | null> }
	| {
			kind: 'imd';
			measurements: { method: 'smpte' | 'twin-tone'; channels: ({ imdPercent: number } | null)[] }[];
	  }
	| { kind: 'meter'; maxErrorDb: number | null; maxErrorPercent: number | null; points: unknown[] }
	| {
			kind: 'stability';
			observed: 'none' | 'ringing' | 'oscillation';
			loadOhms: number;
			capacitanceMicrofarads: number;
	  };

const side = (ch: number) => (ch ? 'right' : 'left');

export function procedureHeadline(r: ProcedureResultLike): string {
	if (r.kind === 'response')
		return r.flatness
			.map((f, ch) => (f ? `${side(ch)} within ±${f.plusMinusDb.toFixed(2)} dB` : null))
			.filter(Boolean)
			.join(' · ');
	if (r.kind === 'phono')
		return r.maxDeviationDb
			.map((d, ch) => (d !== null ? `${side(ch)} within ${d.toFixed(2)} dB of the RIAA curve` : null))
			.filter(Boolean)
			.join(' · ');
	if (r.kind === 'crosstalk')
		return (['left-to-right', 'right-to-left'] as const)
			.map((d) => {
				const v = r.worstDb[d];
				return v === null ? null : `${d === 'left-to-right' ? 'L→R' : 'R→L'} ≤ ${v.toFixed(1)} dB`;
			})
			.filter(Boolean)
			.join(' · ');
	if (r.kind === 'imd')
		return r.measurements
			.map((m) => {
				const worst = Math.max(...m.channels.map((c) => c?.imdPercent ?? -Infinity));
				const name = m.method === 'smpte' ? 'SMPTE' : 'twin-tone';
				return `${name} ${Number.isFinite(worst) ? `${worst < 0.1 ? worst.toFixed(4) : worst.toFixed(3)} %` : 'not read'}`;
			})
			.join(' · ');
	if (r.kind === 'meter')
		return r.maxErrorDb === null
			? 'meter not read'
			: `meter within ±${r.maxErrorDb.toFixed(2)} dB (±${r.maxErrorPercent!.toFixed(1)} %) over ${r.points.length} powers`;
	if (r.kind === 'stability') {
		const seen = { none: 'no ringing', ringing: 'damped ringing', oscillation: 'oscillation' }[r.observed];
		return `${seen} into ${r.loadOhms} Ω ∥ ${r.capacitanceMicrofarads} µF`;
	}
	return r.crossings
		.map((c, ch) => `${side(ch)} ${c ? `${c.powerW.toFixed(1)} W` : 'not reached'}`)
		.join(' · ');
}
