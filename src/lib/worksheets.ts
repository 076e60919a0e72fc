// The worksheet rules, pure so the bench, the forms and the server judge alike: the mains-setting
// flag at intake, the bias and offset tolerance, when a first power-up counts as complete, the
// bench gate for a long-stored unit, the safety check's completeness, and a job's summary.
import {
	SAFETY_ITEMS,
	WORKSHEET_KIND_LABELS,
	WORKSHEET_KINDS,
	type BiasReadings,
	type BiasSheet,
	type IntakeSheet,
	type PowerUpSheet,
	type SafetySheet,
	type WorksheetData,
	type WorksheetKind,
	type WorksheetSettings
} from './schemas/worksheets';

// ── mains setting ───────────────────────────────────────────────────────────

export interface MainsFlag {
	/** ok: within 5 %; off-nominal: same mains family but more than 5 % off; wrong-mains: the other family. */
	level: 'unknown' | 'ok' | 'off-nominal' | 'wrong-mains';
	flagged: boolean;
	message: string;
}

/** Within this fraction of its setting a unit runs as designed (common practice: ±5 %). */
export const MAINS_MATCH_FRACTION = 0.05;
/** Beyond this ratio the unit is set for the other mains family (100–127 V against 200–240 V). */
const OTHER_FAMILY_RATIO = 1.5;

/**
 * The unit's mains setting against the shop's mains: a 100 V or 120 V unit in a 230 V shop sees
 * about twice its voltage (transformer and filter capacitors over-stressed, at once); a 230 V unit
 * on 120 V runs starved and may mislead the diagnosis. Both are flagged before it is plugged in.
 */
export function mainsSettingFlag(settingVoltsRms: number | null, homeVoltsRms: number): MainsFlag {
	if (settingVoltsRms === null || !(settingVoltsRms > 0))
		return {
			level: 'unknown',
			flagged: true,
			message: 'Read the unit’s mains selector or rating plate before it is plugged in'
		};
	const ratio = homeVoltsRms / settingVoltsRms;
	const pct = Math.round((ratio - 1) * 100);
	if (ratio >= OTHER_FAMILY_RATIO || ratio <= 1 / OTHER_FAMILY_RATIO)
		return {
			level: 'wrong-mains',
			flagged: true,
			message: `Set for ${settingVoltsRms} V, the shop’s mains is ${homeVoltsRms} V: do not plug it in until the selector is changed or it is fed through a suitable transformer`
		};
	if (Math.abs(ratio - 1) > MAINS_MATCH_FRACTION)
		return {
			level: 'off-nominal',
			flagged: true,
			message: `Set for ${settingVoltsRms} V, the shop’s mains is ${homeVoltsRms} V (${pct > 0 ? '+' : ''}${pct} %): set the selector to the nearest tap or feed it through a variable transformer`
		};
	return {
		level: 'ok',
		flagged: false,
		message: `Set for ${settingVoltsRms} V; the shop’s mains is ${homeVoltsRms} V`
	};
}

// ── bias and offset ─────────────────────────────────────────────────────────

export const BIAS_STAGES = ['asFound', 'setCold', 'warm', 'afterSoak'] as const;
export type BiasStage = (typeof BIAS_STAGES)[number];
export const BIAS_STAGE_LABELS: Record<BiasStage, string> = {
	asFound: 'As found',
	setCold: 'Set cold',
	warm: 'After 15–30 min',
	afterSoak: 'After soak'
};

/** True when `value` lies within ±`tolerancePercent` % of `target` (the edge counts as within). */
export function withinTolerance(value: number, target: number, tolerancePercent: number): boolean {
	// A hair of slack so 10 % of 15 mV (1.5 mV, not exact in binary) is still "within" at 16.5.
	return Math.abs(value - target) <= (Math.abs(target) * tolerancePercent) / 100 + 1e-9;
}

export interface BiasStatus {
	/** Per stage read: within tolerance or not; absent stages are not judged. */
	stages: Partial<Record<BiasStage, boolean>>;
	/** The last stage read after adjustment (after soak, then warm, then set cold), or null. */
	final: { stage: BiasStage; value: number; ok: boolean } | null;
}

export function biasStatus(r: BiasReadings, tolerancePercent: number): BiasStatus {
	const stages: Partial<Record<BiasStage, boolean>> = {};
	for (const s of BIAS_STAGES) {
		const v = r[s];
		if (v !== null) stages[s] = withinTolerance(v, r.target, tolerancePercent);
	}
	let final: BiasStatus['final'] = null;
	for (const s of ['afterSoak', 'warm', 'setCold'] as const) {
		const v = r[s];
		if (v !== null) {
			final = { stage: s, value: v, ok: stages[s]! };
			break;
		}
	}
	return { stages, final };
}

export function offsetOk(offsetMillivolts: number | null, limitMillivolts: number): boolean | null {
	return offsetMillivolts === null ? null : Math.abs(offsetMillivolts) <= limitMillivolts;
}

export interface BiasSheetStatus {
	/** Channels whose last adjusted reading (or warm offset) is out of tolerance. */
	outOfTolerance: string[];
	/** Every channel has a set-cold and a warm reading, and a warm offset where it has an offset. */
	complete: boolean;
}

export function biasSheetStatus(sheet: BiasSheet, settings: WorksheetSettings): BiasSheetStatus {
	const out: string[] = [];
	let complete = sheet.channels.length > 0;
	for (const c of sheet.channels) {
		const r = c.biasMillivolts ?? c.biasMilliamps;
		if (!r) continue;
		const s = biasStatus(r, settings.biasTolerancePercent);
		if (s.final && !s.final.ok) out.push(`${c.label} bias`);
		const warmOffset = c.offsetMillivolts.warm ?? c.offsetMillivolts.cold;
		if (offsetOk(warmOffset, settings.offsetLimitMillivolts) === false) out.push(`${c.label} offset`);
		if (r.setCold === null || r.warm === null) complete = false;
	}
	return { outOfTolerance: out, complete };
}

// ── first power-up ──────────────────────────────────────────────────────────

/** A step counts as "full mains" at 90 % of the unit's setting or more (common practice). */
export const FULL_MAINS_FRACTION = 0.9;

export interface PowerUpStatus {
	complete: boolean;
	/** What is still missing, in words, all at once. */
	missing: string[];
}

/** Complete: steps logged, the last reaching full mains for the unit, and marked finished. */
export function powerUpStatus(sheet: PowerUpSheet | null, fullMainsVoltsRms: number): PowerUpStatus {
	if (!sheet) return { complete: false, missing: ['No power-up steps logged yet'] };
	const missing: string[] = [];
	if (sheet.method === null)
		missing.push('Say how the mains was limited (variable transformer or series lamp)');
	if (sheet.steps.length === 0) missing.push('Log the steps (mains applied, current, rails, time held)');
	else {
		const top = Math.max(...sheet.steps.map((s) => s.mainsVoltsRms));
		const needed = Math.round(fullMainsVoltsRms * FULL_MAINS_FRACTION);
		if (top < needed) missing.push(`Reach full mains (at least ${needed} V; highest step so far ${top} V)`);
	}
	if (!sheet.finished)
		missing.push('Mark the power-up finished once the unit held full mains without distress');
	return { complete: missing.length === 0, missing };
}

// ── the bench gate ──────────────────────────────────────────────────────────

export interface BenchGate {
	blocked: boolean;
	/** Why, and what lifts it, in one sentence (empty when not blocked). */
	reason: string;
}

export function benchGate(
	intake: IntakeSheet | null,
	powerUp: PowerUpSheet | null,
	settings: WorksheetSettings
): BenchGate {
	if (!intake?.storedForYears) return { blocked: false, reason: '' };
	const status = powerUpStatus(powerUp, intake.mainsSettingVoltsRms ?? settings.homeMainsVoltsRms);
	if (status.complete) return { blocked: false, reason: '' };
	return {
		blocked: true,
		reason: `This unit is marked “stored for years — do not apply full mains”: complete the first power-up sheet before the generator, a soak or a capture (still to do: ${status.missing.join('; ')})`
	};
}

// ── safety check ────────────────────────────────────────────────────────────

export interface SafetyStatus {
	state: 'none' | 'incomplete' | 'failed' | 'passed';
	/** Each missing or failed item, in words. */
	problems: string[];
}

/**
 * Each item pass, fail or not applicable; pass and fail need the reading (where the item has one)
 * and the instrument. An earthed unit needs earth continuity; an unearthed one insulation or
 * leakage. Any fail, or anything missing, blocks sign-off.
 */
export function safetyStatus(sheet: SafetySheet | null): SafetyStatus {
	if (!sheet) return { state: 'none', problems: ['No safety check recorded'] };
	const problems: string[] = [];
	let failed = false;
	if (sheet.earthed === null) problems.push('Say whether the unit is earthed (class I) or not');
	for (const item of SAFETY_ITEMS) {
		const v = sheet[item.key] as { result: string | null; instrument: string } & Record<string, unknown>;
		if (v.result === null) {
			problems.push(`${item.label}: not recorded`);
			continue;
		}
		if (v.result === 'fail') {
			failed = true;
			problems.push(`${item.label}: failed`);
		}
		if (v.result === 'n-a') continue;
		if (item.reading && v[item.reading] === null)
			problems.push(`${item.label}: give the reading (${item.unit})`);
		if (item.key === 'mainsCapacitors' && v.action === null)
			problems.push(`${item.label}: say whether checked or replaced`);
		if (!v.instrument) problems.push(`${item.label}: name the instrument used`);
	}
	if (sheet.earthed === true && sheet.earthContinuity.result === 'n-a')
		problems.push('Earth continuity applies to an earthed unit');
	if (sheet.earthed === false && sheet.insulation.result !== 'pass' && sheet.leakage.result !== 'pass')
		problems.push('An unearthed unit needs a passed insulation resistance or leakage current test');
	return {
		state: failed ? 'failed' : problems.length ? 'incomplete' : 'passed',
		problems
	};
}

// ── a job's worksheets in one view ──────────────────────────────────────────

export type Sheets = { [K in WorksheetKind]: WorksheetData[K] | null };

export interface WorksheetLine {
	kind: WorksheetKind;
	label: string;
	present: boolean;
	/** done: nothing left to do; attention: flagged or incomplete; blocked: fails a rule. */
	state: 'missing' | 'done' | 'attention' | 'blocked';
	detail: string;
	updatedAt: string | null;
	updatedByName: string | null;
	version: number;
}

export interface WorksheetSummary {
	jobId: number;
	mains: MainsFlag | null;
	gate: BenchGate;
	safety: SafetyStatus;
	bias: BiasSheetStatus | null;
	powerUp: PowerUpStatus | null;
	lines: WorksheetLine[];
	/** The sheets themselves, for the pages that show them in full (review, compare). */
	sheets: Sheets;
}

export function summarizeWorksheets(
	jobId: number,
	sheets: Sheets,
	meta: Partial<Record<WorksheetKind, { updatedAt: string; updatedByName: string | null; version: number }>>,
	settings: WorksheetSettings
): WorksheetSummary {
	const intake = sheets.intake;
	const mains = intake ? mainsSettingFlag(intake.mainsSettingVoltsRms, settings.homeMainsVoltsRms) : null;
	const gate = benchGate(intake, sheets['power-up'], settings);
	const safety = safetyStatus(sheets.safety);
	const bias = sheets.bias ? biasSheetStatus(sheets.bias, settings) : null;
	const fullMains = intake?.mainsSettingVoltsRms ?? settings.homeMainsVoltsRms;
	const powerUp = sheets['power-up'] ? powerUpStatus(sheets['power-up'], fullMains) : null;

	const judge = (kind: WorksheetKind): Pick<WorksheetLine, 'state' | 'detail'> => {
		switch (kind) {
			case 'intake':
				if (!intake) return { state: 'missing', detail: 'Not filled in' };
				return {
					state: mains?.flagged || intake.storedForYears ? 'attention' : 'done',
					detail: [mains?.message, intake.storedForYears ? 'Stored for years: limited power-up first' : '']
						.filter(Boolean)
						.join('. ')
				};
			case 'power-up':
				if (!powerUp)
					return intake?.storedForYears
						? { state: 'blocked', detail: 'Required before the generator, a soak or a capture' }
						: { state: 'missing', detail: 'Not logged' };
				return powerUp.complete
					? { state: 'done', detail: `${sheets['power-up']!.steps.length} steps to full mains` }
					: { state: gate.blocked ? 'blocked' : 'attention', detail: powerUp.missing.join('; ') };
			case 'bias':
				if (!bias) return { state: 'missing', detail: 'Not recorded' };
				if (bias.outOfTolerance.length)
					return { state: 'attention', detail: `Out of tolerance: ${bias.outOfTolerance.join(', ')}` };
				return bias.complete
					? { state: 'done', detail: `${sheets.bias!.channels.length} channels within tolerance` }
					: { state: 'attention', detail: 'Cold and warm readings still to take' };
			case 'safety':
				if (safety.state === 'passed') return { state: 'done', detail: 'Every item recorded; none failed' };
				if (safety.state === 'none') return { state: 'missing', detail: 'Not recorded' };
				return {
					state: safety.state === 'failed' ? 'blocked' : 'attention',
					detail: safety.problems.join('; ')
				};
		}
	};

	return {
		jobId,
		mains,
		gate,
		safety,
		bias,
		powerUp,
		sheets,
		lines: WORKSHEET_KINDS.map((kind) => ({
			kind,
			label: WORKSHEET_KIND_LABELS[kind],
			present: sheets[kind] !== null,
			...judge(kind),
			updatedAt: meta[kind]?.updatedAt ?? null,
			updatedByName: meta[kind]?.updatedByName ?? null,
			version: meta[kind]?.version ?? 0
		}))
	};
}
