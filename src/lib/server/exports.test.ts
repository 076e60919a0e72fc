// The snapshot figures export: one row per snapshot and channel, units in the headers, RFC 4180
// quoting, and a label that a spreadsheet would run as a formula is escaped.
import { beforeEach, describe, expect, it } from 'vitest';
import { openDb, type Db } from './db/open';
import * as table from './db/schema';
import { createSnapshot } from './snapshots';
import { snapshotFigureRows, snapshotFiguresCsv } from './exports';
import { wav16 } from './file-fixtures';

let db: Db;
let jobId: number;
beforeEach(() => {
	db = openDb(':memory:');
	db.insert(table.users)
		.values({ id: 'u1', email: 't@example.com', name: 'Tess Bench', role: 'technician', passwordHash: 'x' })
		.run();
	const c = db.insert(table.customers).values({ name: 'C' }).returning().get();
	jobId = db
		.insert(table.jobs)
		.values({ customerId: c.id, category: 'receiver', make: 'Vellum', model: 'R-2', complaint: 'hum' })
		.returning()
		.get().id;
});

describe('snapshot figures export', () => {
	it('writes one row per snapshot and channel with units in the headers', () => {
		const snap = (label: string) =>
			createSnapshot(db, {
				jobId,
				userId: 'u1',
				wav: wav16(0.5, 48_000, 1000, 0.5),
				meta: { label, stage: 'before', fullScaleVolts: 2 }
			});
		snap('before, "quiet" room');
		snap('=HYPERLINK("x")');
		const rows = snapshotFigureRows(db, jobId);
		expect(rows).toHaveLength(4);
		expect(rows.map((r) => r.channel)).toEqual([0, 1, 0, 1]);
		// 0.5 of a 2 V-peak full scale: 1 V peak = 1/√2 V rms (sine rms = peak/√2).
		expect(rows[0].levelVrms).toBeCloseTo(Math.SQRT1_2, 3);
		const csv = snapshotFiguresCsv(rows);
		const lines = csv.split('\r\n');
		expect(lines[0]).toContain('Level (V rms),Level (dBV)');
		expect(lines[0]).toContain('THD+N (%)');
		expect(lines[0]).toContain('Frequency (Hz)');
		expect(lines).toHaveLength(6); // header, 4 rows, and the empty string after the last CRLF
		// RFC 4180 2.7: a double quote inside a quoted field is doubled.
		expect(lines[1]).toContain('"before, ""quiet"" room"');
		// The formula-looking label is prefixed with a quote so a spreadsheet shows it as text.
		expect(lines[3]).toContain(`"'=HYPERLINK(""x"")"`);
	});

	it('answers 404 for no such job', () => {
		expect(() => snapshotFigureRows(db, 9999)).toThrow(/No such job/);
	});
});
