import Database from 'better-sqlite3';
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterEach, describe, expect, it } from 'vitest';
import { nextInvoiceNumber } from '../../src/lib/server/invoice-number';
import { openDb } from '../../src/lib/server/db/open';

const dirs: string[] = [];
afterEach(() => dirs.splice(0).forEach((d) => rmSync(d, { recursive: true, force: true })));

function twoConnections() {
	const dir = mkdtempSync(join(tmpdir(), 'invoice-seq-'));
	dirs.push(dir);
	const file = join(dir, 'db.sqlite');
	// The app's own opening: every migration applied, WAL on.
	const a = openDb(file).$client;
	const b = new Database(file, { timeout: 0 });
	return { a, b };
}

describe('invoice number sequence', () => {
	it('two connections interleaving creations get a gapless, unique sequence', () => {
		const { a, b } = twoConnections();
		const got: string[] = [];
		for (let i = 0; i < 20; i++) {
			const conn = i % 2 === 0 ? a : b;
			got.push(conn.transaction(() => nextInvoiceNumber(conn, 2026).label).immediate());
		}
		expect(got).toEqual(Array.from({ length: 20 }, (_, i) => `2026-${String(i + 1).padStart(4, '0')}`));
		a.close();
		b.close();
	});

	it('while one connection holds the write, the other cannot take a number; after commit it gets the next', () => {
		const { a, b } = twoConnections();
		a.exec('BEGIN IMMEDIATE');
		expect(nextInvoiceNumber(a, 2026).sequence).toBe(1);
		expect(() => b.transaction(() => nextInvoiceNumber(b, 2026)).immediate()).toThrow(/locked|busy/i);
		a.exec('COMMIT');
		expect(b.transaction(() => nextInvoiceNumber(b, 2026).sequence).immediate()).toBe(2);
		a.close();
		b.close();
	});

	it('a rolled-back invoice gives its number back (no gap); each year starts at 1', () => {
		const { a, b } = twoConnections();
		a.transaction(() => nextInvoiceNumber(a, 2026)).immediate();
		expect(() =>
			a.transaction(() => {
				nextInvoiceNumber(a, 2026);
				throw new Error('invoice insert failed');
			})()
		).toThrow('invoice insert failed');
		expect(b.transaction(() => nextInvoiceNumber(b, 2026).label).immediate()).toBe('2026-0002');
		expect(b.transaction(() => nextInvoiceNumber(b, 2027).label).immediate()).toBe('2027-0001');
		expect(() => nextInvoiceNumber(a, 2026)).toThrow(/inside the transaction/);
		a.close();
		b.close();
	});
});
