// One line per saved procedure for people: the job page, compare and the customer report.
import type { Flatness } from './sweep';

export type ProcedureResultLike =
	| { kind: 'response'; flatness: (Flatness | null)[] }
	| { kind: 'phono'; maxDeviationDb: (number | null)[] }
	| { kind: 'max-power'; crossings: ({ powerW: number } | null)[] };

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
	return r.crossings
		.map((c, ch) => `${side(ch)} ${c ? `${c.powerW.toFixed(1)} W` : 'not reached'}`)
		.join(' · ');
}
