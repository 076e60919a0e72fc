// Demo worksheets: the Pellowmere SA-150 awaiting sign-off gets all four sheets filled in, and a
// long-stored valve amplifier waits for its first power-up (the bench stays shut until it is
// logged). Invented figures, plausible for the units. Relative imports only: runs under tsx.
import { and, eq } from 'drizzle-orm';
import type { Db } from '../src/lib/server/db/open';
import * as table from '../src/lib/server/db/schema';
import { saveWorksheet } from '../src/lib/server/worksheets';
import {
	biasChannelExample,
	intakeExample,
	passedSafetySheet,
	powerUpExample
} from '../src/lib/worksheet-examples';

const HOUR_MS = 3_600_000;

/** The long-stored demo unit, so people and tests can find it. */
export const LONG_STORED_DEMO = { make: 'Veldmoor', model: 'VA-12' } as const;

export function seedWorksheetsDemo(
	db: Db,
	userIds: Record<string, string>,
	nowMs: number,
	signOffDemo: { make: string; model: string }
): void {
	const tech = userIds.tech1;
	const demo = db
		.select({ id: table.jobs.id })
		.from(table.jobs)
		.where(and(eq(table.jobs.make, signOffDemo.make), eq(table.jobs.model, signOffDemo.model)))
		.get();
	if (demo) {
		const at = (hoursAgo: number) => new Date(nowMs - hoursAgo * HOUR_MS);
		saveWorksheet(
			db,
			demo.id,
			'intake',
			{ version: 0, data: intakeExample({ accessories: 'Rack handles, no manual' }) },
			tech,
			at(46)
		);
		saveWorksheet(
			db,
			demo.id,
			'power-up',
			{ version: 0, data: powerUpExample({ method: 'variable-transformer', lampWatts: null }) },
			tech,
			at(45)
		);
		saveWorksheet(
			db,
			demo.id,
			'bias',
			{
				version: 0,
				data: {
					channels: [
						biasChannelExample('L', {
							biasMillivolts: { target: 15, asFound: 9.8, setCold: 14.6, warm: 15.4, afterSoak: 15.8 }
						}),
						biasChannelExample('R', {
							biasMillivolts: { target: 15, asFound: 4.2, setCold: 14.9, warm: 15.7, afterSoak: 16.1 },
							offsetMillivolts: { cold: -3.1, warm: -6.4 }
						})
					],
					notes: 'Right channel bias trimmer VR702 replaced before setting.'
				}
			},
			tech,
			at(30)
		);
		saveWorksheet(db, demo.id, 'safety', { version: 0, data: passedSafetySheet() }, tech, at(6));
	}

	// A valve amplifier out of a loft: taken in a day ago, marked stored for years, not yet powered.
	// Written with its own times (not at the head of the queue, where other demos pick a job).
	const takenInMs = nowMs - 26 * HOUR_MS;
	const jobId = db.transaction((tx) => {
		const customerId = tx
			.insert(table.customers)
			.values({
				name: 'Bertil Okonkwo-Marsh',
				email: 'bertil.om@example.net',
				createdAt: new Date(takenInMs)
			})
			.returning({ id: table.customers.id })
			.get().id;
		const id = tx
			.insert(table.jobs)
			.values({
				customerId,
				category: 'valve-amplifier',
				make: LONG_STORED_DEMO.make,
				model: LONG_STORED_DEMO.model,
				serial: 'VM-2291',
				year: 1963,
				complaint: 'Stored in a loft since the 1980s; untested. Customer wants it safe to use.',
				ratedPowerW: 12,
				ratedLoadOhms: 8,
				status: 'diagnosing',
				technicianId: tech,
				createdAt: new Date(takenInMs),
				updatedAt: new Date(takenInMs + HOUR_MS)
			})
			.returning({ id: table.jobs.id })
			.get().id;
		tx.insert(table.jobStatusHistory)
			.values([
				{
					jobId: id,
					userId: tech,
					fromStatus: null,
					toStatus: 'received',
					note: 'Taken in',
					createdAt: new Date(takenInMs)
				},
				{
					jobId: id,
					userId: tech,
					fromStatus: 'received',
					toStatus: 'diagnosing',
					createdAt: new Date(takenInMs + HOUR_MS)
				}
			])
			.run();
		return id;
	});
	saveWorksheet(
		db,
		jobId,
		'intake',
		{
			version: 0,
			data: intakeExample({
				mainsSettingVoltsRms: 220,
				fuseFound: '1.6 A glass, blackened',
				coversPresent: false,
				accessories: 'Bottom plate missing',
				asReceived: null,
				storedForYears: true,
				notes: 'Do not plug in: limited power-up first. Filter can shows a bulge.'
			})
		},
		tech,
		new Date(takenInMs + 10 * 60_000)
	);
}
