// The model notebook: the shop's memory of one make and model. Every job on the model, the parts
// fitted grouped by reference designator (how many units had each replaced), the model's
// documents, the adjustment notes (saved whole with the version they were edited from; every
// version kept) and the typical figures of repaired units under the same conditions.
// Jobs are found through `job_model_keys` (one key per job, $lib/notebook/model-key), filled in
// here for jobs that have none yet (new, or whose make or model was edited).
import { stringify } from 'csv-stringify/sync';
import { and, asc, count, desc, eq, inArray } from 'drizzle-orm';
import type { Db } from './db/open';
import * as table from './db/schema';
import { audit } from './audit';
import { DomainError } from './errors';
import { validate } from './validate';
import { listModelFiles } from './job-files';
import { syncModelKeys as syncJobModelKeys } from './model-keys';
import { keyPart, modelKeyString } from '../notebook/model-key';
import {
	TYPICAL_METRICS,
	summarise,
	typicalGroups,
	whereItSits,
	placement,
	MIN_UNITS,
	type TypicalGroup,
	type TypicalMetricKey,
	type TypicalSample
} from '../notebook/typical';
import {
	channelFigure,
	channelName,
	channelsOf,
	conditionsOf,
	stimulusOf,
	type ComparableSnapshot
} from '../compare';
import {
	modelNotesSaveSchema,
	modelSearchSchema,
	type DesignatorRow,
	type ModelList,
	type ModelLookup,
	type ModelSearch,
	type Notebook,
	type NotebookJob,
	type NoteVersionView,
	type SnapshotPlacement
} from '../schemas/notebook';

/** Most jobs listed in one notebook (newest first); the count says how many there are in all. */
export const NOTEBOOK_JOBS_MAX = 200;
/** Most fitted parts read for the designator table. */
export const NOTEBOOK_PARTS_MAX = 5000;
/** Most passing after-repair snapshots read for the typical figures (newest first). */
export const TYPICAL_SNAPSHOTS_MAX = 300;
/** Note versions shown (newest first). */
export const NOTE_HISTORY_MAX = 50;
/** Figures placed on the compare and snapshot pages. */
export const PLACED_METRICS: readonly TypicalMetricKey[] = ['thdnPercent', 'snrDb'];

// ── keys ────────────────────────────────────────────────────────────────────

/** Key the jobs added since the database was opened (see ./model-keys). */
export function syncModelKeys(db: Db): void {
	syncJobModelKeys(db.$client);
}

/** The key of route parameters `make` and `model` (any spelling), or 404 when either is blank. */
export function keyOfParams(make: string, model: string): { key: string; make: string; model: string } {
	const k = { make: keyPart(make), model: keyPart(model) };
	if (!k.make || !k.model) throw new DomainError('not-found', 'No such model: give a make and a model');
	return { key: `${k.make}/${k.model}`, ...k };
}

const pathOf = (key: string) => `/models/${key.split('/').map(encodeURIComponent).join('/')}`;

function escapeLike(s: string): string {
	return s.replace(/[\\%_]/g, (c) => `\\${c}`);
}

// ── search ──────────────────────────────────────────────────────────────────

/** Models seen in the shop, most recently seen first; `q` matches however the make and model were typed. */
export function listModels(db: Db, query: Partial<ModelSearch>): ModelList {
	const q = validate(modelSearchSchema, query, 'Invalid query string');
	syncModelKeys(db);
	const needle = q.q ? keyPart(q.q) : '';
	const filter = needle ? `AND replace(k.model_key, '/', '') LIKE ? ESCAPE '\\'` : '';
	const args = needle ? [`%${escapeLike(needle)}%`] : [];
	const { total } = db.$client
		.prepare(
			`SELECT count(DISTINCT k.model_key) AS total FROM job_model_keys k WHERE k.model_key != '' ${filter}`
		)
		.get(...args) as { total: number };
	// SQLite takes the bare make/model from the row holding max(created_at): the newest spelling.
	const rows = db.$client
		.prepare(
			`SELECT k.model_key AS key, j.make AS make, j.model AS model, count(*) AS jobs,
			        max(j.created_at) AS lastSeenMs
			 FROM job_model_keys k JOIN jobs j ON j.id = k.job_id
			 WHERE k.model_key != '' ${filter}
			 GROUP BY k.model_key ORDER BY lastSeenMs DESC, k.model_key LIMIT ? OFFSET ?`
		)
		.all(...args, q.pageSize, (q.page - 1) * q.pageSize) as {
		key: string;
		make: string;
		model: string;
		jobs: number;
		lastSeenMs: number;
	}[];
	return {
		items: rows.map((r) => ({
			key: r.key,
			make: r.make,
			model: r.model,
			path: pathOf(r.key),
			jobs: r.jobs,
			lastSeenAt: new Date(r.lastSeenMs).toISOString()
		})),
		total,
		page: q.page,
		pageSize: q.pageSize
	};
}

/** What intake suggests for a typed make and model: the notebook, when the shop has seen the model. */
export function lookupModel(db: Db, make: string, model: string): ModelLookup | null {
	const key = modelKeyString(make, model);
	if (!key) return null;
	syncModelKeys(db);
	const jobs =
		db.select({ n: count() }).from(table.jobModelKeys).where(eq(table.jobModelKeys.modelKey, key)).get()?.n ??
		0;
	if (!jobs) return null;
	const last = db
		.select({
			make: table.jobs.make,
			model: table.jobs.model,
			complaint: table.jobs.complaint,
			createdAt: table.jobs.createdAt
		})
		.from(table.jobModelKeys)
		.innerJoin(table.jobs, eq(table.jobs.id, table.jobModelKeys.jobId))
		.where(eq(table.jobModelKeys.modelKey, key))
		.orderBy(desc(table.jobs.createdAt), desc(table.jobs.id))
		.limit(1)
		.get()!;
	return {
		key,
		make: last.make,
		model: last.model,
		path: pathOf(key),
		jobs,
		lastComplaint: last.complaint,
		lastSeenAt: last.createdAt.toISOString()
	};
}

// ── the notebook ────────────────────────────────────────────────────────────

/** Designators in a part's `refDes` ("C401, C402" → C401 and C402), upper case. */
export function designatorsOf(refDes: string): string[] {
	return refDes
		.split(/[\s,;/]+/)
		.map((d) => d.trim().toUpperCase())
		.filter(Boolean);
}

const natural = (a: string, b: string) => a.localeCompare(b, 'en', { numeric: true });

/**
 * Fitted parts grouped by designator: designators fitted on exactly the same units under the same
 * description make one row ("C401, C402 Main filter capacitor — 4 of 6 units").
 */
export function designatorRows(
	parts: readonly { jobId: number; refDes: string; description: string; value: string | null }[],
	ofUnits: number
): DesignatorRow[] {
	const byDes = new Map<
		string,
		{ jobs: Set<number>; descriptions: Map<string, number>; values: Set<string> }
	>();
	for (const p of parts)
		for (const d of designatorsOf(p.refDes)) {
			const e = byDes.get(d) ?? { jobs: new Set(), descriptions: new Map(), values: new Set() };
			e.jobs.add(p.jobId);
			const desc = p.description.trim();
			e.descriptions.set(desc, (e.descriptions.get(desc) ?? 0) + 1);
			if (p.value) e.values.add(p.value.trim());
			byDes.set(d, e);
		}
	const rows = new Map<string, DesignatorRow>();
	for (const [d, e] of byDes) {
		const description = [...e.descriptions].sort((a, b) => b[1] - a[1] || natural(a[0], b[0]))[0][0];
		const jobIds = [...e.jobs].sort((a, b) => a - b);
		const groupKey = `${jobIds.join(',')}|${description.toLowerCase()}`;
		const row = rows.get(groupKey) ?? {
			designators: [],
			description,
			values: [],
			units: jobIds.length,
			ofUnits,
			jobIds
		};
		row.designators.push(d);
		for (const v of e.values) if (!row.values.includes(v)) row.values.push(v);
		rows.set(groupKey, row);
	}
	return [...rows.values()]
		.map((r) => ({ ...r, designators: r.designators.sort(natural) }))
		.sort((a, b) => b.units - a.units || natural(a.designators[0], b.designators[0]));
}

/** A number rounded to `digits` significant digits (null stays null): 999.99999 Hz and 1000.00003 Hz are one tone. */
function sig(v: unknown, digits: number): number | null {
	return typeof v === 'number' && Number.isFinite(v) ? Number(v.toPrecision(digits)) : null;
}

/**
 * The measuring conditions that decide whether two readings compare: a key from the stored numbers
 * (stimulus, fundamental to 3 significant digits, load, generator level, band, weighting) and the
 * same conditions in words for the page.
 */
export function conditionsKeyOf(s: ComparableSnapshot): { key: string; label: string } {
	const c = conditionsOf(s);
	const r = (s.results ?? {}) as { conditions?: Record<string, unknown>; channels?: unknown };
	const rc = r.conditions ?? {};
	const fund = channelsOf(s)
		.map((ch) => sig(ch.raw.frequencyHz, 3))
		.find((v) => v !== null);
	const band = Array.isArray(rc.bandHz) ? rc.bandHz.map((v) => sig(v, 4)) : null;
	const key = JSON.stringify([
		typeof rc.stimulus === 'string' ? rc.stimulus : null,
		stimulusOf(s),
		sig(rc.expectedFrequencyHz, 3) ?? fund ?? null,
		sig(rc.loadOhms, 4) ?? sig(s.loadOhms, 4),
		sig(rc.referenceVrms, 4),
		band,
		typeof rc.weighting === 'string' ? rc.weighting : null
	]);
	const label = [
		c.stimulus,
		c.frequency && `fundamental ${c.frequency}`,
		c.load && `load ${c.load}`,
		c.level && `generator ${c.level}`,
		c.band && `band ${c.band}`,
		c.weighting
	]
		.filter(Boolean)
		.join(' · ');
	return { key, label };
}

type SnapRow = {
	id: number;
	jobId: number;
	label: string;
	results: unknown;
	settings: unknown;
	loadOhms: number | null;
	sampleRateHz: number;
};

function comparable(s: SnapRow): ComparableSnapshot {
	return {
		id: s.id,
		label: s.label,
		results: s.results,
		settings: s.settings,
		loadOhms: s.loadOhms,
		sampleRateHz: s.sampleRateHz
	};
}

/**
 * One reading per unit, channel and figure: each job's newest passing after-repair snapshot under
 * each set of conditions (a unit measured twice counts once). `excludeJobId` leaves one unit out
 * (the one being placed against the others).
 */
export function typicalSamples(db: Db, key: string, excludeJobId?: number): TypicalSample[] {
	syncModelKeys(db);
	const snaps = db
		.select({
			id: table.snapshots.id,
			jobId: table.snapshots.jobId,
			label: table.snapshots.label,
			results: table.snapshots.results,
			settings: table.snapshots.settings,
			loadOhms: table.snapshots.loadOhms,
			sampleRateHz: table.snapshots.sampleRateHz
		})
		.from(table.snapshots)
		.innerJoin(table.jobModelKeys, eq(table.jobModelKeys.jobId, table.snapshots.jobId))
		.where(
			and(
				eq(table.jobModelKeys.modelKey, key),
				eq(table.snapshots.stage, 'after'),
				eq(table.snapshots.verdict, 'pass')
			)
		)
		.orderBy(desc(table.snapshots.createdAt), desc(table.snapshots.id))
		.limit(TYPICAL_SNAPSHOTS_MAX)
		.all();
	const seen = new Set<string>();
	const out: TypicalSample[] = [];
	for (const s of snaps) {
		if (s.jobId === excludeJobId) continue;
		const snap = comparable(s);
		const cond = conditionsKeyOf(snap);
		const once = `${s.jobId}|${cond.key}`;
		if (seen.has(once)) continue;
		seen.add(once);
		for (const ch of channelsOf(snap))
			for (const def of TYPICAL_METRICS) {
				const v = channelFigure(snap, ch.channel, def.key).value;
				if (v === null) continue;
				out.push({
					unitId: s.jobId,
					snapshotId: s.id,
					conditionsKey: cond.key,
					conditionsLabel: cond.label,
					metric: def.key as TypicalMetricKey,
					value: v
				});
			}
	}
	return out;
}

function noteHistory(db: Db, key: string): NoteVersionView[] {
	return db
		.select({ v: table.modelNoteVersions, name: table.users.name })
		.from(table.modelNoteVersions)
		.leftJoin(table.users, eq(table.users.id, table.modelNoteVersions.savedBy))
		.where(eq(table.modelNoteVersions.modelKey, key))
		.orderBy(desc(table.modelNoteVersions.version))
		.limit(NOTE_HISTORY_MAX)
		.all()
		.map(({ v, name }) => ({
			version: v.version,
			text: v.text,
			savedAt: v.savedAt.toISOString(),
			savedByName: name
		}));
}

function currentNotes(db: Db, key: string) {
	return db
		.select({ n: table.modelNotes, name: table.users.name })
		.from(table.modelNotes)
		.leftJoin(table.users, eq(table.users.id, table.modelNotes.updatedBy))
		.where(eq(table.modelNotes.modelKey, key))
		.get();
}

/**
 * A model's notebook from route parameters (any spelling of make and model). 404 when the shop
 * has no job, note or document on the model.
 */
export function getNotebook(db: Db, makeParam: string, modelParam: string): Notebook {
	const k = keyOfParams(makeParam, modelParam);
	syncModelKeys(db);
	const onModel = eq(table.jobModelKeys.modelKey, k.key);
	const jobCount = db.select({ n: count() }).from(table.jobModelKeys).where(onModel).get()?.n ?? 0;
	const jobRows = db
		.select({
			id: table.jobs.id,
			make: table.jobs.make,
			model: table.jobs.model,
			serial: table.jobs.serial,
			complaint: table.jobs.complaint,
			status: table.jobs.status,
			createdAt: table.jobs.createdAt,
			updatedAt: table.jobs.updatedAt
		})
		.from(table.jobModelKeys)
		.innerJoin(table.jobs, eq(table.jobs.id, table.jobModelKeys.jobId))
		.where(onModel)
		.orderBy(desc(table.jobs.createdAt), desc(table.jobs.id))
		.limit(NOTEBOOK_JOBS_MAX)
		.all();
	const notes = currentNotes(db, k.key);
	const documents = listModelFiles(db, k.key);
	if (!jobRows.length && !notes && !documents.length)
		throw new DomainError(
			'not-found',
			'The shop has no job, note or document on this model yet; the notebook starts with its first job'
		);

	const ids = jobRows.map((j) => j.id);
	const firstLog = new Map<number, string>();
	if (ids.length)
		for (const l of db
			.select({ jobId: table.workLog.jobId, text: table.workLog.text })
			.from(table.workLog)
			.where(inArray(table.workLog.jobId, ids))
			.orderBy(asc(table.workLog.createdAt), asc(table.workLog.id))
			.all())
			if (!firstLog.has(l.jobId))
				firstLog.set(l.jobId, l.text.length > 240 ? `${l.text.slice(0, 239)}…` : l.text);
	const jobs: NotebookJob[] = jobRows.map((j) => ({
		...j,
		finding: firstLog.get(j.id) ?? null,
		createdAt: j.createdAt.toISOString(),
		updatedAt: j.updatedAt.toISOString()
	}));

	const parts = db
		.select({
			jobId: table.parts.jobId,
			refDes: table.parts.refDes,
			description: table.parts.description,
			value: table.parts.value
		})
		.from(table.parts)
		.innerJoin(table.jobModelKeys, eq(table.jobModelKeys.jobId, table.parts.jobId))
		.where(and(onModel, eq(table.parts.state, 'fitted')))
		.limit(NOTEBOOK_PARTS_MAX)
		.all();

	const display = jobRows[0] ?? notes?.n ?? { make: k.make, model: k.model };
	return {
		key: k.key,
		make: display.make,
		model: display.model,
		path: pathOf(k.key),
		jobs,
		jobCount,
		parts: designatorRows(parts, jobCount),
		notes: notes
			? {
					text: notes.n.text,
					version: notes.n.version,
					updatedAt: notes.n.updatedAt.toISOString(),
					updatedByName: notes.name
				}
			: null,
		noteHistory: noteHistory(db, k.key),
		documents,
		typical: typicalGroups(typicalSamples(db, k.key))
	};
}

/**
 * Save a model's adjustment notes whole. 400 bad body; 409 when `version` is not the stored one
 * (someone saved in between). The text, its version row and the audit entry commit together.
 */
export function saveModelNotes(
	db: Db,
	makeParam: string,
	modelParam: string,
	body: unknown,
	actorId: string,
	now = new Date()
): Notebook {
	const input = validate(modelNotesSaveSchema, body, 'Invalid notes');
	const nb = getNotebook(db, makeParam, modelParam);
	db.transaction((tx) => {
		const current = tx
			.select({ version: table.modelNotes.version, at: table.modelNotes.updatedAt, name: table.users.name })
			.from(table.modelNotes)
			.leftJoin(table.users, eq(table.users.id, table.modelNotes.updatedBy))
			.where(eq(table.modelNotes.modelKey, nb.key))
			.get();
		const stored = current?.version ?? 0;
		if (input.version !== stored)
			throw new DomainError(
				'conflict',
				current
					? `These notes were saved by ${current.name ?? 'someone else'} at ${current.at.toISOString()} (version ${stored}; you edited version ${input.version}): reload them and make your change again`
					: 'There are no saved notes on this model yet: send version 0',
				[{ path: 'version', message: `The stored version is ${stored}` }]
			);
		const next = stored + 1;
		if (current)
			tx.update(table.modelNotes)
				.set({ text: input.text, version: next, updatedBy: actorId, updatedAt: now })
				.where(eq(table.modelNotes.modelKey, nb.key))
				.run();
		else
			tx.insert(table.modelNotes)
				.values({
					modelKey: nb.key,
					make: nb.make,
					model: nb.model,
					text: input.text,
					version: next,
					updatedBy: actorId,
					updatedAt: now
				})
				.run();
		tx.insert(table.modelNoteVersions)
			.values({ modelKey: nb.key, version: next, text: input.text, savedBy: actorId, savedAt: now })
			.run();
		audit(tx, {
			actorId,
			action: 'model-notes.saved',
			subject: `adjustment notes on ${nb.make} ${nb.model}`,
			detail: { modelKey: nb.key, version: next },
			at: now
		});
	});
	return getNotebook(db, makeParam, modelParam);
}

// ── where one unit sits ─────────────────────────────────────────────────────

/**
 * Where a snapshot's headline figures sit among the repaired units of its model measured under the
 * same conditions (its own job left out), or null when its job has no usable make and model.
 */
export function placeSnapshot(db: Db, snapshotId: number): SnapshotPlacement | null {
	const s = db
		.select({
			id: table.snapshots.id,
			jobId: table.snapshots.jobId,
			label: table.snapshots.label,
			results: table.snapshots.results,
			settings: table.snapshots.settings,
			loadOhms: table.snapshots.loadOhms,
			sampleRateHz: table.snapshots.sampleRateHz,
			make: table.jobs.make,
			model: table.jobs.model
		})
		.from(table.snapshots)
		.innerJoin(table.jobs, eq(table.jobs.id, table.snapshots.jobId))
		.where(eq(table.snapshots.id, snapshotId))
		.get();
	if (!s) return null;
	const key = modelKeyString(s.make, s.model);
	if (!key) return null;
	const snap = comparable(s);
	const cond = conditionsKeyOf(snap);
	const samples = typicalSamples(db, key, s.jobId).filter((x) => x.conditionsKey === cond.key);
	const lines: SnapshotPlacement['lines'] = [];
	for (const metric of PLACED_METRICS) {
		const def = TYPICAL_METRICS.find((d) => d.key === metric)!;
		const t = summarise(samples.filter((x) => x.metric === metric));
		for (const ch of channelsOf(snap)) {
			const v = channelFigure(snap, ch.channel, metric).value;
			if (v === null) continue;
			lines.push({
				metric,
				channel: ch.channel,
				value: v,
				text: whereItSits({ ...def, label: `${def.label} (${channelName(ch.channel)})` }, v, t),
				where: placement(v, t)
			});
		}
	}
	return {
		path: pathOf(key),
		make: s.make,
		model: s.model,
		conditionsLabel: cond.label,
		units: new Set(samples.map((x) => x.unitId)).size,
		lines
	};
}

/** Where a job's newest after-repair snapshot sits among its model's other units (null without one). */
export function placeJob(db: Db, jobId: number): (SnapshotPlacement & { snapshotId: number }) | null {
	const latest = db
		.select({ id: table.snapshots.id })
		.from(table.snapshots)
		.where(and(eq(table.snapshots.jobId, jobId), eq(table.snapshots.stage, 'after')))
		.orderBy(desc(table.snapshots.createdAt), desc(table.snapshots.id))
		.limit(1)
		.get();
	const placed = latest ? placeSnapshot(db, latest.id) : null;
	return placed && latest ? { ...placed, snapshotId: latest.id } : null;
}

// ── export ──────────────────────────────────────────────────────────────────

const STATS = [
	['median', 'median'],
	['q1', 'Q1 (25th percentile)'],
	['q3', 'Q3 (75th percentile)'],
	['min', 'min'],
	['max', 'max']
] as const;

/**
 * A model's typical figures as CSV (RFC 4180, csv-stringify): one row per set of conditions, for
 * each figure its median, quartiles (Hyndman & Fan definition 7), range and units, the unit in
 * every header. Figures from fewer than MIN_UNITS units are left empty (their unit count is given).
 */
export function typicalCsv(groups: readonly TypicalGroup[]): string {
	const columns: { key: string; header: string }[] = [
		{ key: 'conditions', header: 'Conditions' },
		{ key: 'units', header: 'Units measured' }
	];
	for (const def of TYPICAL_METRICS) {
		for (const [stat, name] of STATS)
			columns.push({ key: `${def.key}_${stat}`, header: `${def.label} ${name} (${def.unit})` });
		columns.push({ key: `${def.key}_units`, header: `${def.label} units (count; ${MIN_UNITS} needed)` });
	}
	const records = groups.map((g) => {
		const rec: Record<string, string | number | null> = { conditions: g.conditionsLabel, units: g.units };
		for (const row of g.rows) {
			rec[`${row.metric}_units`] = row.typical.units;
			if (row.typical.enough) for (const [stat] of STATS) rec[`${row.metric}_${stat}`] = row.typical[stat];
		}
		return rec;
	});
	return stringify(records, {
		header: true,
		columns,
		escape_formulas: true,
		record_delimiter: 'windows',
		cast: { number: (n) => String(n) }
	});
}
