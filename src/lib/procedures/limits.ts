// A limit profile's procedure limits: which profile figure judges which procedure, and the limit a
// saved run was judged against (from the profile, or typed for the run).
import { describeLimit, toBaseUnit, type Limit, type Metric } from '$lib/limit-profiles';
import type { ProcedureKind } from '$lib/schemas/procedures';

/** The profile figure that judges each procedure (null: a record with no limit). */
export const PROCEDURE_LIMIT_METRIC: Record<ProcedureKind, Metric | null> = {
	response: 'flatnessDb',
	phono: 'riaaDeviationDb',
	'max-power': 'powerAtThresholdW',
	crosstalk: 'crosstalkDb',
	imd: 'imdPercent',
	meter: 'meterErrorDb',
	stability: null
};

export interface AppliedLimit {
	/** In the figure's base unit (dB, W, %). */
	value: number;
	op: 'le' | 'ge';
	/** One line for people: "Procedure: response flatness ≤ 1 dB". */
	text: string;
	source: 'profile' | 'run';
	profile?: { id: number; name: string };
}

/** The first limit of the profile that judges `kind`, or null. */
export function profileLimitFor(
	kind: ProcedureKind,
	profile: { id: number; name: string; limits: readonly Limit[] }
): AppliedLimit | null {
	const metric = PROCEDURE_LIMIT_METRIC[kind];
	const l = metric ? profile.limits.find((x) => x.metric === metric) : undefined;
	if (!l) return null;
	return {
		value: toBaseUnit(l.value, l.unit),
		op: l.op,
		text: describeLimit(l),
		source: 'profile',
		profile: { id: profile.id, name: profile.name }
	};
}
