// The customer's measured report: one typed model of what the customer may see of a job, built
// from the job, the shop's settings, the before/after snapshots (through the compare module),
// the soak, the procedures, the safety check and the sign-off. The page, the public link and
// the PDF all render this one model; internal notes never enter it.
import type { Db } from './db/open';
import { DomainError } from './errors';
import { getJob } from './jobs';
import { getSettings } from './settings';
import { getSnapshot, thumbnailOf, type SnapshotDetail } from './snapshots';
import { listRuns, getRunDetail } from './soak';
import { standingSignOff, evaluateJob } from './sign-off';
import { procedureSummary } from './procedures';
import { worksheetSummary } from './worksheets';
import {
	channelFigure,
	stereoFigure,
	formatFigure,
	CHANNEL_FIGURES,
	STEREO_FIGURES,
	type FigureDef
} from '../compare';
import { categoryLabel } from '../format';
import { probeLabel } from '../soak/probes';
import { PROCEDURE_LABELS } from '../schemas/procedures';
import { procedureHeadline } from '../procedures/headline';

/** A figure as the customer reads it: what it is in plain words, before and after. */
export interface ReportFigure {
	id: string;
	label: string;
	channel: 'Left' | 'Right' | null;
	plain: string;
	before: string | null;
	after: string | null;
}

export interface ReportSnapshotHead {
	label: string;
	/** One line for the reader: "Before: as received (2026-12-02; band 20 Hz–20 kHz, unweighted, into 8 Ω)". */
	caption: string;
	date: string;
	conditions: string;
	verdict: string;
}

export interface ReportTrace {
	label: string;
	frequencyHz: number[];
	levelDbv: number[];
}

export interface ReportModel {
	shop: {
		name: string;
		address: string;
		phone: string;
		email: string;
		warrantyNote: string;
		safetyNote: string;
		footer: string;
	};
	generatedAt: string;
	job: {
		id: number;
		category: string;
		make: string;
		model: string;
		serial: string | null;
		year: number | null;
		complaint: string;
		ratedPowerW: number | null;
		ratedLoadOhms: number | null;
	};
	customerName: string;
	work: { date: string; text: string }[];
	parts: { refDes: string; description: string; value: string | null; quantity: number }[];
	before: ReportSnapshotHead | null;
	after: ReportSnapshotHead | null;
	figures: ReportFigure[];
	spectra: ReportTrace[];
	soak: {
		status: string;
		preset: string;
		drivePowerW: number;
		loadOhms: number;
		minutes: number;
		maxC: { probe: string; celsius: number }[];
		series: { minutes: number[]; traces: { label: string; meanC: (number | null)[] }[] };
	} | null;
	procedures: { label: string; kind: string; verdict: string; summary: string }[];
	safetyCheck: string | null;
	/** The bench worksheets on record: intake, first power-up, bias and offset, safety check. */
	worksheets: { label: string; detail: string }[];
	signOff: { name: string; at: string; meaning: string } | null;
}

/** The figures a customer is shown, each with what it means in plain words. */
const PLAIN: Record<string, string> = {
	levelVrms: 'The test output, in volts, that the other figures were measured at.',
	powerW: 'The power delivered into the test load at that level.',
	thdPercent: 'How much of the output is added overtones of the test tone — lower is better.',
	thdnPercent:
		'How much of the output is not the test tone (overtones, hum and hiss together) — lower is better.',
	noiseVrms: 'The hiss and hum left when the tone is removed — lower is better.',
	noiseWeightedVrms: 'The same, weighted the way the ear hears quiet sounds (A-weighting) — lower is better.',
	snrDb: 'How far the noise sits below the output level — higher is better.',
	dcVolts: 'Direct voltage at the speaker terminals — close to zero protects the speakers.',
	balanceDb: 'The difference in loudness between left and right — close to zero is better.',
	crosstalkDb: 'How much of one channel leaks into the other — lower (more negative) is better.',
	imdPercent: 'Distortion from two tones mixing — lower is better.'
};

function defsOf(list: readonly FigureDef[]): FigureDef[] {
	return list.filter((d) => d.key in PLAIN);
}

function head(s: SnapshotDetail | null, stage: 'Before' | 'After'): ReportSnapshotHead | null {
	if (!s) return null;
	const c = s.results?.conditions as { bandHz?: number[]; weighting?: string } | undefined;
	const band = c?.bandHz ? `${c.bandHz[0]} Hz–${c.bandHz[1] / 1000} kHz` : '20 Hz–20 kHz';
	const parts = [
		`band ${band}`,
		c?.weighting === 'a' ? 'A-weighted' : 'unweighted',
		s.loadOhms ? `into ${s.loadOhms} Ω` : null
	].filter(Boolean);
	const conditions = parts.join(', ');
	// A label that already says its stage ("Before: as received") is not prefixed twice.
	const label = s.label.toLowerCase().startsWith(stage.toLowerCase()) ? s.label : `${stage}: ${s.label}`;
	return {
		label: s.label,
		caption: `${label} (${s.createdAt.slice(0, 10)}; ${conditions}).`,
		date: s.createdAt,
		conditions,
		verdict: s.verdict
	};
}

const SOAK_STATUS: Record<string, string> = {
	passed: 'Passed',
	failed: 'Failed',
	aborted: 'Stopped early',
	running: 'Still running'
};

export function buildReport(db: Db, jobId: number, nowMs = Date.now()): ReportModel {
	const job = getJob(db, jobId);
	if (!job) throw new DomainError('not-found', 'No such job');
	const settings = getSettings(db);
	const r = settings.customerReport;

	// The snapshots the sign-off judges: the latest before and the latest after.
	const evaluation = evaluateJob(db, jobId, '');
	const before = evaluation.latestBefore !== null ? getSnapshot(db, evaluation.latestBefore, jobId) : null;
	const after = evaluation.latestAfter !== null ? getSnapshot(db, evaluation.latestAfter, jobId) : null;
	const figures: ReportFigure[] = [];
	const fmt = (def: FigureDef, v: { value: number | null } | null) =>
		v && v.value !== null ? formatFigure(def, v.value) : null;
	const channels = Math.max(before?.results?.channels?.length ?? 0, after?.results?.channels?.length ?? 0);
	for (const def of defsOf(CHANNEL_FIGURES))
		for (let ch = 0; ch < Math.min(2, channels); ch++) {
			const b = before ? fmt(def, channelFigure(before, ch, def.key)) : null;
			const a = after ? fmt(def, channelFigure(after, ch, def.key)) : null;
			if (b === null && a === null) continue;
			figures.push({
				id: `ch${ch}:${def.key}`,
				label: def.label,
				channel: ch === 0 ? 'Left' : 'Right',
				plain: PLAIN[def.key],
				before: b,
				after: a
			});
		}
	for (const def of defsOf(STEREO_FIGURES)) {
		const b = before ? fmt(def, stereoFigure(before, def.key)) : null;
		const a = after ? fmt(def, stereoFigure(after, def.key)) : null;
		if (b === null && a === null) continue;
		figures.push({
			id: `stereo:${def.key}`,
			label: def.label,
			channel: null,
			plain: PLAIN[def.key],
			before: b,
			after: a
		});
	}

	const spectra: ReportTrace[] = [];
	for (const [s, name] of [
		[before, 'Before'],
		[after, 'After']
	] as const) {
		const c = s?.spectrum?.channels?.[0];
		if (c) spectra.push({ label: `${name} (left)`, ...thumbnailOf(c, 320) });
	}

	// The soak the customer hears about: the latest passed run, else the latest ended one.
	const runs = listRuns(db, jobId, nowMs).filter((x) => x.run.status !== 'running');
	const pick = runs.find((x) => x.run.status === 'passed') ?? runs[0];
	let soak: ReportModel['soak'] = null;
	if (pick) {
		const d = getRunDetail(db, pick.run.id, nowMs);
		const probes = Object.keys(d.series.probes);
		soak = {
			status: SOAK_STATUS[d.run.status] ?? d.run.status,
			preset: d.run.preset,
			drivePowerW: d.run.drivePowerW,
			loadOhms: d.run.loadOhms,
			minutes: Math.round(d.run.durationS / 60),
			maxC: Object.entries(pick.maxC).map(([p, c]) => ({ probe: probeLabel(p), celsius: c })),
			series: {
				minutes: d.series.minutes,
				traces: probes.map((p) => ({ label: probeLabel(p), meanC: d.series.probes[p].meanC }))
			}
		};
	}

	const procedures = procedureSummary(db, jobId).map((p) => ({
		label: p.label,
		kind: PROCEDURE_LABELS[p.kind],
		verdict: p.verdict,
		summary: procedureHeadline(p.result)
	}));

	const SAFETY: Record<string, string | null> = {
		none: null,
		incomplete: 'Not complete',
		failed: 'Failed',
		passed: 'Passed'
	};
	const ws = worksheetSummary(db, jobId);
	const safetyCheck = SAFETY[ws.safety.state] ?? null;
	const worksheets = ws.lines.filter((l) => l.present).map((l) => ({ label: l.label, detail: l.detail }));

	const standing = standingSignOff(db, jobId);
	const signOff =
		standing && standing.signOff.decision === 'approve' && standing.check.intact
			? {
					name: standing.signOff.signerName,
					at: standing.signOff.signedAt,
					meaning: standing.signOff.meaning
				}
			: null;

	return {
		shop: {
			name: settings.shopName,
			address: r.address,
			phone: r.phone,
			email: r.email,
			warrantyNote: r.warrantyNote,
			safetyNote: r.safetyNote,
			footer: r.footer
		},
		generatedAt: new Date(nowMs).toISOString(),
		job: {
			id: job.id,
			category: categoryLabel(job.category),
			make: job.make,
			model: job.model,
			serial: job.serial,
			year: job.year,
			complaint: job.complaint,
			ratedPowerW: job.ratedPowerW,
			ratedLoadOhms: job.ratedLoadOhms
		},
		customerName: job.customer.name,
		work: job.log.filter((l) => l.forCustomer).map((l) => ({ date: l.createdAt, text: l.text })),
		parts: job.parts
			.filter((p) => p.state === 'fitted')
			.map((p) => ({ refDes: p.refDes, description: p.description, value: p.value, quantity: p.quantity })),
		before: head(before, 'Before'),
		after: head(after, 'After'),
		figures,
		spectra,
		soak,
		procedures,
		safetyCheck,
		worksheets,
		signOff
	};
}
