// Gapless invoice numbers per year ("2026-0001"). The counter is bumped by one atomic
// statement inside the caller's write transaction: a concurrent creator on another connection
// waits for the write lock, and a rolled-back invoice rolls its number back too.
import type BetterSqlite3 from 'better-sqlite3';

export function nextInvoiceNumber(
	client: BetterSqlite3.Database,
	year: number
): { year: number; sequence: number; label: string } {
	if (!Number.isInteger(year) || year < 2000 || year > 9999) {
		throw new RangeError(`Invoice year must be a whole year between 2000 and 9999, got ${year}`);
	}
	if (!client.inTransaction) {
		throw new Error('nextInvoiceNumber must run inside the transaction that creates the invoice');
	}
	const row = client
		.prepare(
			`INSERT INTO invoice_counters (year, last_number) VALUES (?, 1)
			 ON CONFLICT(year) DO UPDATE SET last_number = last_number + 1
			 RETURNING last_number AS n`
		)
		.get(year) as { n: number };
	return { year, sequence: row.n, label: `${year}-${String(row.n).padStart(4, '0')}` };
}
