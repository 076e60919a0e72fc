// A job's snapshot figures for other tools: one row per snapshot and channel, units in the column
// names, as CSV (csv-stringify; cells that a spreadsheet would run as formulas are escaped) or JSON.
import { stringify } from 'csv-stringify/sync';
import { asc, eq } from 'drizzle-orm';
import type { Db } from './db/open';
import * as table from './db/schema';
import { DomainError } from './errors';
import { jobExists } from './jobs';
import type { SnapshotResults } from './snapshots';

/** Most snapshots exported from one job. */
export const EXPORT_MAX_SNAPSHOTS = 2000;

export interface SnapshotFigureRow {
	snapshotId: number;
	label: string;
	stage: string;
	verdict: string;
	profile: string | null;
	capturedAt: string;
	capturedBy: string;
	sampleRateHz: number;
	channel: number;
	frequencyHz: number | null;
	levelVrms: number;
	levelDbv: number;
	powerW: number | null;
	gainDb: number | null;
	thdPercent: number | null;
	thdnPercent: number | null;
	thdnDb: number | null;
	noiseDbv: number;
	snrDb: number | null;
	sinadDb: number | null;
	dcVolts: number;
	bandLowHz: number | null;
	bandHighHz: number | null;
	weighting: string | null;
	loadOhms: number | null;
}

/** Column key → header with its unit. */
export const CSV_COLUMNS: { key: keyof SnapshotFigureRow; header: string }[] = [
	{ key: 'snapshotId', header: 'Snapshot' },
	{ key: 'label', header: 'Label' },
	{ key: 'stage', header: 'Stage' },
	{ key: 'verdict', header: 'Verdict' },
	{ key: 'profile', header: 'Limit profile' },
	{ key: 'capturedAt', header: 'Captured at (UTC, ISO 8601)' },
	{ key: 'capturedBy', header: 'Captured by' },
	{ key: 'sampleRateHz', header: 'Sample rate (Hz)' },
	{ key: 'channel', header: 'Channel (0 = left)' },
	{ key: 'frequencyHz', header: 'Frequency (Hz)' },
	{ key: 'levelVrms', header: 'Level (V rms)' },
	{ key: 'levelDbv', header: 'Level (dBV)' },
	{ key: 'powerW', header: 'Power (W)' },
	{ key: 'gainDb', header: 'Gain (dB)' },
	{ key: 'thdPercent', header: 'THD (%)' },
	{ key: 'thdnPercent', header: 'THD+N (%)' },
	{ key: 'thdnDb', header: 'THD+N (dB)' },
	{ key: 'noiseDbv', header: 'Noise (dBV)' },
	{ key: 'snrDb', header: 'SNR (dB)' },
	{ key: 'sinadDb', header: 'SINAD (dB)' },
	{ key: 'dcVolts', header: 'DC offset (V)' },
	{ key: 'bandLowHz', header: 'Band low (Hz)' },
	{ key: 'bandHighHz', header: 'Band high (Hz)' },
	{ key: 'weighting', header: 'Weighting' },
	{ key: 'loadOhms', header: 'Load (ohms)' }
];

/** The figure rows of a job's snapshots, oldest first (404 for no such job). */
export function snapshotFigureRows(db: Db, jobId: number): SnapshotFigureRow[] {
	if (!jobExists(db, jobId)) throw new DomainError('not-found', 'No such job');
	const rows = db
		.select({ s: table.snapshots, by: table.users.name })
		.from(table.snapshots)
		.innerJoin(table.users, eq(table.users.id, table.snapshots.createdBy))
		.where(eq(table.snapshots.jobId, jobId))
		.orderBy(asc(table.snapshots.createdAt), asc(table.snapshots.id))
		.limit(EXPORT_MAX_SNAPSHOTS)
		.all();
	return rows.flatMap(({ s, by }) => {
		const r = s.results as SnapshotResults;
		const p = s.profile as { name?: unknown } | null;
		return (r.channels ?? []).map((c) => ({
			snapshotId: s.id,
			label: s.label,
			stage: s.stage,
			verdict: s.verdict,
			profile: p && typeof p.name === 'string' ? p.name : null,
			capturedAt: s.createdAt.toISOString(),
			capturedBy: by,
			sampleRateHz: s.sampleRateHz,
			channel: c.channel,
			frequencyHz: c.frequencyHz,
			levelVrms: c.levelVrms,
			levelDbv: c.levelDbv,
			powerW: c.powerW ?? null,
			gainDb: c.gainDb ?? null,
			thdPercent: c.thdPercent,
			thdnPercent: c.thdnPercent,
			thdnDb: c.thdnDb,
			noiseDbv: c.noiseDbv,
			snrDb: c.snrDb,
			sinadDb: c.sinadDb,
			dcVolts: c.dcVolts,
			bandLowHz: r.conditions?.bandHz?.[0] ?? null,
			bandHighHz: r.conditions?.bandHz?.[1] ?? null,
			weighting: r.conditions?.weighting ?? null,
			loadOhms: s.loadOhms
		}));
	});
}

/** The rows as CSV text (RFC 4180), headers with units; empty cells for figures that do not apply. */
export function snapshotFiguresCsv(rows: SnapshotFigureRow[]): string {
	return stringify(rows, {
		header: true,
		columns: CSV_COLUMNS,
		escape_formulas: true,
		record_delimiter: 'windows',
		cast: { number: (n) => String(n) }
	});
}
