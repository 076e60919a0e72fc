// The demo worksheets: the sign-off demo job carries all four sheets and passes the safety check;
// the long-stored valve amplifier is flagged and its bench is shut until a power-up is logged.
import { describe, expect, it } from 'vitest';
import { and, eq } from 'drizzle-orm';
import { openDb } from '../src/lib/server/db/open';
import * as table from '../src/lib/server/db/schema';
import { worksheetSummary } from '../src/lib/server/worksheets';
import { listJobs } from '../src/lib/server/jobs';
import { SIGN_OFF_DEMO, seedDemo } from './seed';
import { LONG_STORED_DEMO } from './seed-worksheets';

describe('demo worksheets', () => {
	it('fills the sign-off demo job and leaves a long-stored unit awaiting its power-up', async () => {
		const db = openDb(':memory:');
		await seedDemo(db);
		const idOf = (m: { make: string; model: string }) =>
			db
				.select({ id: table.jobs.id })
				.from(table.jobs)
				.where(and(eq(table.jobs.make, m.make), eq(table.jobs.model, m.model)))
				.get()!.id;
		const demo = worksheetSummary(db, idOf(SIGN_OFF_DEMO));
		expect(demo.lines.map((l) => [l.kind, l.state])).toEqual([
			['intake', 'done'],
			['power-up', 'done'],
			['bias', 'done'],
			['safety', 'done']
		]);
		const stored = worksheetSummary(db, idOf(LONG_STORED_DEMO));
		expect(stored.gate.blocked).toBe(true);
		expect(stored.lines.find((l) => l.kind === 'power-up')?.state).toBe('blocked');
		// Its 220 V tap is within 5 % of the demo shop's 230 V mains.
		expect(stored.mains?.level).toBe('ok');
		// Not at the head of the queue, where the bench demos pick their job.
		expect(listJobs(db, {}).items[0].id).not.toBe(idOf(LONG_STORED_DEMO));
	});
});
