// The model notebook service on an in-memory database: one model however it was typed, parts
// grouped by designator with how many units, typical figures from passing after-repair snapshots
// under the same conditions ("not enough units yet" below three), notes with history and audit.
import { beforeEach, describe, expect, it } from 'vitest';
import { openDb, type Db } from './db/open';
import * as table from './db/schema';
import {
	designatorRows,
	getNotebook,
	listModels,
	lookupModel,
	placeSnapshot,
	saveModelNotes,
	typicalCsv
} from './notebook';
import { quantile7 } from '../notebook/typical';
import { eq } from 'drizzle-orm';

let db: Db;
let customerId: number;

beforeEach(() => {
	db = openDb(':memory:');
	db.insert(table.users)
		.values({ id: 'u1', email: 't@example.com', name: 'Tess Bench', role: 'technician', passwordHash: 'x' })
		.run();
	customerId = db.insert(table.customers).values({ name: 'C' }).returning().get().id;
});

let clock = Date.UTC(2026, 0, 1);
function job(make: string, model: string, complaint = 'hum'): number {
	clock += 86_400_000;
	return db
		.insert(table.jobs)
		.values({ customerId, category: 'power-amplifier', make, model, complaint, createdAt: new Date(clock) })
		.returning()
		.get().id;
}

function part(jobId: number, refDes: string, description: string, state: table.PartState = 'fitted') {
	db.insert(table.parts).values({ jobId, refDes, description, state, value: '10000 µF 63 V' }).run();
}

/** A stored snapshot with the given per-channel figures (results written as the analysis stores them). */
function snapshot(
	jobId: number,
	figures: { thdnPercent: number; snrDb: number }[],
	opts: {
		stage?: table.SnapshotStage;
		verdict?: 'pass' | 'fail' | 'none';
		loadOhms?: number;
		frequencyHz?: number;
	} = {}
): number {
	clock += 60_000;
	const loadOhms = opts.loadOhms ?? 8;
	return db
		.insert(table.snapshots)
		.values({
			jobId,
			createdBy: 'u1',
			label: 'after',
			stage: opts.stage ?? 'after',
			sampleRateHz: 48_000,
			channelCount: figures.length,
			sampleCount: 48_000,
			fullScaleVolts: 10,
			loadOhms,
			results: {
				conditions: {
					stimulus: 'tone',
					bandHz: [20, 20_000],
					weighting: 'none',
					referenceVrms: 0.447,
					loadOhms
				},
				channels: figures.map((f, channel) => ({ channel, frequencyHz: opts.frequencyHz ?? 1000, ...f }))
			},
			verdict: opts.verdict ?? 'pass',
			checks: [],
			spectrum: {},
			createdAt: new Date(clock)
		})
		.returning()
		.get().id;
}

describe('models: one key however the make and model were typed', () => {
	it('lists one model for three spellings, finds it by search, and intake gets the last complaint', () => {
		job('Pellowmere', 'SA-150', 'Right channel distorts');
		job('PELLOWMERE', 'sa150', 'Hum after warm-up');
		job('pellowmere ', 'SA 150', 'Dead, fuse blown');
		job('Corvane', 'CR-7400');
		const all = listModels(db, {});
		expect(all.total).toBe(2);
		expect(all.items[0]).toMatchObject({ key: 'corvane/cr7400', jobs: 1 });
		expect(all.items[1]).toMatchObject({
			key: 'pellowmere/sa150',
			jobs: 3,
			// The newest spelling is shown.
			make: 'pellowmere ',
			model: 'SA 150',
			path: '/models/pellowmere/sa150'
		});
		expect(listModels(db, { q: 'Pellowmere sa-15' }).items.map((m) => m.key)).toEqual(['pellowmere/sa150']);
		expect(listModels(db, { q: 'zzz' })).toMatchObject({ total: 0, items: [] });
		expect(listModels(db, { pageSize: 1, page: 2 }).items.map((m) => m.key)).toEqual(['pellowmere/sa150']);
		expect(lookupModel(db, 'Pellowmere', 'Sa-150')).toMatchObject({
			jobs: 3,
			lastComplaint: 'Dead, fuse blown',
			path: '/models/pellowmere/sa150'
		});
		expect(lookupModel(db, 'Pellowmere', 'SA-1500')).toBeNull();
		expect(() => listModels(db, { pageSize: 500 })).toThrow(
			expect.objectContaining({ issues: [{ path: 'pageSize', message: 'pageSize is at most 100' }] })
		);
	});

	it('re-keys a job whose model is edited', () => {
		const id = job('Pellowmere', 'SA-150');
		expect(lookupModel(db, 'Pellowmere', 'SA-150')?.jobs).toBe(1);
		db.update(table.jobs).set({ model: 'SA-160' }).where(eqId(id)).run();
		expect(lookupModel(db, 'Pellowmere', 'SA-150')).toBeNull();
		expect(lookupModel(db, 'Pellowmere', 'SA-160')?.jobs).toBe(1);
	});

	it('404 for a model with no job, note or document, and for a blank key', () => {
		expect(() => getNotebook(db, 'nobody', 'nothing')).toThrow(/no job, note or document/);
		expect(() => getNotebook(db, '--', 'x')).toThrow(/No such model/);
	});
});

const eqId = (id: number) => eq(table.jobs.id, id);

describe('parts by designator', () => {
	it('counts fitted parts by designator across units ("C402 — 3 of 4 units")', () => {
		const a = job('Pellowmere', 'SA-150');
		const b = job('Pellowmere', 'SA-150');
		const c = job('Pellowmere', 'SA-150');
		job('Pellowmere', 'SA-150');
		part(a, 'C401, C402', 'Main filter capacitor');
		part(b, 'c401 c402', 'Main filter capacitor');
		part(c, 'C402', 'Main filter capacitor');
		part(c, 'Q3', 'Output transistor', 'ordered'); // ordered, not fitted: not a replacement
		const nb = getNotebook(db, 'pellowmere', 'sa150');
		expect(nb.jobCount).toBe(4);
		expect(nb.parts.map((p) => [p.designators.join(', '), p.units, p.ofUnits])).toEqual([
			['C402', 3, 4],
			['C401', 2, 4]
		]);
	});

	it('joins designators fitted together on the same units into one row, in natural order', () => {
		const rows = designatorRows(
			[
				{ jobId: 1, refDes: 'C10, C9', description: 'Filter cap', value: null },
				{ jobId: 2, refDes: 'C9;C10', description: 'Filter cap', value: '4700 µF' },
				{ jobId: 2, refDes: 'R105', description: 'Resistor', value: null }
			],
			2
		);
		expect(rows).toEqual([
			{
				designators: ['C9', 'C10'],
				description: 'Filter cap',
				values: ['4700 µF'],
				units: 2,
				ofUnits: 2,
				jobIds: [1, 2]
			},
			{ designators: ['R105'], description: 'Resistor', values: [], units: 1, ofUnits: 2, jobIds: [2] }
		]);
	});
});

describe('typical figures', () => {
	it('says not enough units yet with two units, and summarises from the third', () => {
		const a = job('Pellowmere', 'SA-150');
		const b = job('Pellowmere', 'SA-150');
		snapshot(a, [
			{ thdnPercent: 0.008, snrDb: 96 },
			{ thdnPercent: 0.009, snrDb: 95 }
		]);
		// An older passing after snapshot of the same unit and conditions: only the newest counts.
		snapshot(b, [
			{ thdnPercent: 0.5, snrDb: 60 },
			{ thdnPercent: 0.5, snrDb: 60 }
		]);
		snapshot(b, [
			{ thdnPercent: 0.011, snrDb: 94 },
			{ thdnPercent: 0.015, snrDb: 93 }
		]);
		let nb = getNotebook(db, 'Pellowmere', 'SA-150');
		expect(nb.typical).toHaveLength(1);
		expect(nb.typical[0].units).toBe(2);
		expect(nb.typical[0].rows.find((r) => r.metric === 'thdnPercent')?.typical).toEqual({
			enough: false,
			units: 2,
			readings: 4
		});

		const c = job('Pellowmere', 'SA-150');
		snapshot(c, [
			{ thdnPercent: 0.02, snrDb: 92 },
			{ thdnPercent: 0.012, snrDb: 91 }
		]);
		// Not counted: a before snapshot, a failing after snapshot, another load (its own group).
		snapshot(c, [{ thdnPercent: 9, snrDb: 40 }], { stage: 'before' });
		snapshot(a, [{ thdnPercent: 9, snrDb: 40 }], { verdict: 'fail' });
		snapshot(c, [{ thdnPercent: 0.03, snrDb: 90 }], { loadOhms: 4 });
		nb = getNotebook(db, 'Pellowmere', 'SA-150');
		expect(nb.typical.map((g) => g.units)).toEqual([3, 1]);
		expect(nb.typical[0].conditionsLabel).toContain('load 8 Ω');
		expect(nb.typical[1].conditionsLabel).toContain('load 4 Ω');
		const thdn = nb.typical[0].rows.find((r) => r.metric === 'thdnPercent')!.typical;
		const values = [0.008, 0.009, 0.011, 0.015, 0.02, 0.012].sort((x, y) => x - y);
		// tests/REFERENCES.md §23 (Hyndman & Fan definition 7), checked against the pure module's worked examples.
		expect(thdn).toMatchObject({ enough: true, units: 3, readings: 6, min: 0.008, max: 0.02 });
		if (!thdn.enough) throw new Error('expected enough');
		expect(thdn.median).toBeCloseTo(0.0115, 12); // (0.011 + 0.012) / 2
		expect(thdn.q1).toBeCloseTo(quantile7(values, 0.25), 12);
		expect(thdn.q1).toBeCloseTo(0.0095, 12); // h = 1.25: 0.009 + 0.25 × (0.011 − 0.009)
		expect(thdn.q3).toBeCloseTo(0.01425, 12); // h = 3.75: 0.012 + 0.75 × (0.015 − 0.012)

		const csv = typicalCsv(nb.typical).split('\r\n');
		expect(csv[0]).toContain('THD+N median (%)');
		expect(csv[0]).toContain('SNR Q1 (25th percentile) (dB)');
		expect(csv[1]).toContain(',3,');
		expect(csv[1]).toContain('0.0115');
	});

	it('counts a fitted 999.99999 Hz and 1000.00003 Hz as one tone, and 1 kHz and 2 kHz apart', () => {
		for (const f of [999.9999999434614, 1000.0000000321708, 1000.0000000210573, 2000])
			snapshot(job('Pellowmere', 'SA-150'), [{ thdnPercent: 0.01, snrDb: 95 }], { frequencyHz: f });
		expect(getNotebook(db, 'pellowmere', 'sa150').typical.map((g) => g.units)).toEqual([3, 1]);
	});

	it('places a unit among the others, itself left out', () => {
		const others = [0.008, 0.01, 0.012].map((v) => {
			const id = job('Pellowmere', 'SA-150');
			snapshot(id, [{ thdnPercent: v, snrDb: 95 }]);
			return id;
		});
		const mine = job('Pellowmere', 'SA 150');
		const snap = snapshot(mine, [{ thdnPercent: 0.02, snrDb: 95 }]);
		const placed = placeSnapshot(db, snap)!;
		expect(placed.units).toBe(3);
		expect(placed.path).toBe('/models/pellowmere/sa150');
		const line = placed.lines.find((l) => l.metric === 'thdnPercent')!;
		expect(line.where).toBe('above');
		expect(line.text).toBe(
			'THD+N (L) 0.0200 % — typical for this model is 0.00900–0.0110 %, from 3 units (above the typical range)'
		);
		// One of the three placed against the other two (and the fourth): itself left out.
		const first = placeSnapshot(db, snapshot(others[0], [{ thdnPercent: 0.008, snrDb: 95 }]))!;
		expect(first.units).toBe(3);
		// With only two other units: not enough.
		const lone = job('Corvane', 'CR-1');
		snapshot(job('Corvane', 'CR-1'), [{ thdnPercent: 0.01, snrDb: 90 }]);
		snapshot(job('Corvane', 'CR-1'), [{ thdnPercent: 0.01, snrDb: 90 }]);
		const l = placeSnapshot(db, snapshot(lone, [{ thdnPercent: 0.01, snrDb: 90 }]))!;
		expect(l.lines[0].where).toBeNull();
		expect(l.lines[0].text).toMatch(/not enough units yet for this model \(2 units so far; 3 needed\)/);
	});
});

describe('adjustment notes', () => {
	it('saves whole with the version edited from, keeps every version, refuses a stale save, audits', () => {
		job('Pellowmere', 'SA-150');
		const first = saveModelNotes(
			db,
			'pellowmere',
			'sa150',
			{ version: 0, text: 'Idle 22 mA per side' },
			'u1'
		);
		expect(first.notes).toMatchObject({
			text: 'Idle 22 mA per side',
			version: 1,
			updatedByName: 'Tess Bench'
		});
		expect(() => saveModelNotes(db, 'pellowmere', 'sa150', { version: 0, text: 'Other' }, 'u1')).toThrow(
			/saved by Tess Bench .* \(version 1; you edited version 0\)/
		);
		const second = saveModelNotes(
			db,
			'Pellowmere',
			'SA-150',
			{ version: 1, text: 'Idle 22 mA per side; offset under 10 mV' },
			'u1'
		);
		expect(second.notes?.version).toBe(2);
		expect(second.noteHistory.map((v) => [v.version, v.text])).toEqual([
			[2, 'Idle 22 mA per side; offset under 10 mV'],
			[1, 'Idle 22 mA per side']
		]);
		expect(() => db.$client.prepare("UPDATE model_note_versions SET text = 'x'").run()).toThrow(/immutable/);
		expect(() => db.$client.prepare('DELETE FROM model_note_versions').run()).toThrow(/immutable/);
		const trail = db.select().from(table.auditLog).all();
		expect(trail.map((a) => [a.action, a.subject])).toEqual([
			['model-notes.saved', 'adjustment notes on Pellowmere SA-150'],
			['model-notes.saved', 'adjustment notes on Pellowmere SA-150']
		]);
		expect(() => saveModelNotes(db, 'pellowmere', 'sa150', { version: 2, text: '  ' }, 'u1')).toThrow(
			/Invalid notes/
		);
	});
});
