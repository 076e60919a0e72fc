// Demo history for the model notebook: four earlier, returned units of the sign-off demo's model
// (invented customers; one typed with other spacing and case), the parts fitted by designator, a
// passing after-repair capture of each at the demo job's conditions (so its typical figures have
// enough units), and the shop's adjustment notes in two versions.
import { eq } from 'drizzle-orm';
import type { Db } from '../src/lib/server/db/open';
import * as table from '../src/lib/server/db/schema';
import type { JobStatus } from '../src/lib/server/db/schema';
import { createSnapshot } from '../src/lib/server/snapshots';
import { saveModelNotes } from '../src/lib/server/notebook';
import { demoCapture } from './seed-capture';

const DAY_MS = 24 * 3600 * 1000;
const HOUR_MS = 3600 * 1000;

/** The sign-off demo's own profile (seeded just before): the same conditions as its after snapshot. */
const DEMO_PROFILE = 'Sign-off demo: THD+N at 1 kHz';

interface EarlierUnit {
	customer: { name: string; email: string | null };
	/** As typed at intake: spacing and case vary between units of one model. */
	make: string;
	model: string;
	serial: string;
	complaint: string;
	found: string;
	ageDays: number;
	parts: { refDes: string; description: string; value: string; quantity: number; unitCostCents: number }[];
	/** Output-stage bias each unit was left at (% of nominal in the simulator): their distortion differs a little. */
	biasPercent: number;
}

const FILTER_CAPS = {
	refDes: 'C401, C402',
	description: 'Main filter capacitor',
	value: '10000 µF 63 V',
	quantity: 2,
	unitCostCents: 1890
};

const EARLIER: EarlierUnit[] = [
	{
		customer: { name: 'Oswin Farthingale', email: 'oswin.f@example.net' },
		make: 'Pellowmere',
		model: 'SA-150',
		serial: 'PM-38821',
		complaint: 'Hum in both channels and a crackle when warm.',
		found: 'Main filter capacitors C401/C402 bulged and leaking; bias trimmer VR601 noisy.',
		ageDays: 410,
		parts: [
			FILTER_CAPS,
			{ refDes: 'VR601', description: 'Bias trimmer', value: '500 Ω', quantity: 1, unitCostCents: 240 }
		],
		biasPercent: 88
	},
	{
		customer: { name: 'Ilse Brandywick', email: null },
		make: 'PELLOWMERE',
		model: 'SA150',
		serial: 'PM-39107',
		complaint: 'Left channel cuts out; the protection relay clicks.',
		found: 'Relay RL1 contacts pitted; filter capacitors C401/C402 low in capacitance.',
		ageDays: 265,
		parts: [
			FILTER_CAPS,
			{
				refDes: 'RL1',
				description: 'Speaker protection relay',
				value: '24 V DPDT',
				quantity: 1,
				unitCostCents: 890
			}
		],
		biasPercent: 100
	},
	{
		customer: { name: 'Radomir Chasewell', email: 'radomir.c@example.org' },
		make: 'Pellowmere',
		model: 'SA 150',
		serial: 'PM-40022',
		complaint: 'Right channel distorts on loud passages after warm-up.',
		found: 'Right output transistor Q405 leaky, emitter resistor R421 open.',
		ageDays: 150,
		parts: [
			{
				refDes: 'Q405',
				description: 'Output transistor, NPN',
				value: '200 V 15 A',
				quantity: 1,
				unitCostCents: 645
			},
			{
				refDes: 'R421',
				description: 'Emitter resistor',
				value: '0.22 Ω 5 W',
				quantity: 1,
				unitCostCents: 85
			},
			FILTER_CAPS
		],
		biasPercent: 80
	},
	{
		customer: { name: 'Maelle Quistgaard', email: 'maelle.q@example.com' },
		make: 'Pellowmere',
		model: 'SA-150',
		serial: 'PM-40390',
		complaint: 'Idle current drifts; heatsinks run hot at low volume.',
		found: 'Bias trimmer VR601 worn; idle current wandered from 15 to 60 mA.',
		ageDays: 62,
		parts: [
			{ refDes: 'VR601', description: 'Bias trimmer', value: '500 Ω', quantity: 1, unitCostCents: 240 }
		],
		biasPercent: 94
	}
];

const PATH: JobStatus[] = [
	'received',
	'diagnosing',
	'repairing',
	'testing',
	'awaiting-review',
	'approved',
	'returned'
];

export function seedNotebookDemo(
	db: Db,
	userIds: Record<string, string>,
	nowMs: number,
	model: { make: string; model: string }
): void {
	const tech = userIds.tech2;
	const profile = db
		.select({ id: table.limitProfiles.id })
		.from(table.limitProfiles)
		.where(eq(table.limitProfiles.name, DEMO_PROFILE))
		.get();
	for (const [i, u] of EARLIER.entries()) {
		const createdMs = nowMs - u.ageDays * DAY_MS;
		const jobId = db.transaction((tx) => {
			const customerId = tx
				.insert(table.customers)
				.values({ ...u.customer, createdAt: new Date(createdMs) })
				.returning({ id: table.customers.id })
				.get().id;
			const id = tx
				.insert(table.jobs)
				.values({
					customerId,
					category: 'power-amplifier',
					make: u.make,
					model: u.model,
					serial: u.serial,
					year: 1979,
					complaint: u.complaint,
					ratedPowerW: 75,
					ratedLoadOhms: 8,
					ratedPowerBasis: 'continuous-per-channel',
					ratedThdPercent: 0.1,
					// Captured while in testing; returned once the capture is stored (a signed-off job takes none).
					status: 'testing',
					technicianId: tech,
					createdAt: new Date(createdMs),
					updatedAt: new Date(createdMs + 9 * DAY_MS)
				})
				.returning({ id: table.jobs.id })
				.get().id;
			PATH.forEach((status, step) =>
				tx
					.insert(table.jobStatusHistory)
					.values({
						jobId: id,
						userId: status === 'approved' ? userIds.supervisor : step === 0 ? userIds.admin : tech,
						fromStatus: step === 0 ? null : PATH[step - 1],
						toStatus: status,
						note: step === 0 ? 'Taken in' : null,
						createdAt: new Date(createdMs + step * 1.5 * DAY_MS)
					})
					.run()
			);
			tx.insert(table.workLog)
				.values([
					{ jobId: id, authorId: tech, text: u.found, minutes: 60, createdAt: new Date(createdMs + DAY_MS) },
					{
						jobId: id,
						authorId: tech,
						text: 'Idle current set to 22 mA per side after warm-up; offset under 10 mV both channels.',
						minutes: 30,
						createdAt: new Date(createdMs + 4 * DAY_MS)
					}
				])
				.run();
			tx.insert(table.parts)
				.values(
					u.parts.map((p) => ({
						jobId: id,
						...p,
						supplier: 'Fennick Components',
						state: 'fitted' as const,
						createdAt: new Date(createdMs + 2 * DAY_MS),
						updatedAt: new Date(createdMs + 3 * DAY_MS)
					}))
				)
				.run();
			return id;
		});
		// The after-repair capture at the demo job's conditions: 10 W into 8 Ω at 1 kHz.
		const after = demoCapture({
			tone: { frequencyHz: 1000, levelVrms: 0.447 },
			sim: { biasPercent: u.biasPercent },
			seed: 31 + i,
			seconds: 1
		});
		createSnapshot(db, {
			jobId,
			userId: tech,
			wav: after.wav,
			meta: {
				...after.meta,
				label: 'After: repaired, 10 W at 1 kHz',
				stage: 'after',
				...(profile ? { profileId: profile.id } : {})
			}
		});
		db.update(table.jobs).set({ status: 'returned' }).where(eq(table.jobs.id, jobId)).run();
	}
	const first = saveModelNotes(
		db,
		model.make,
		model.model,
		{
			version: 0,
			text: 'Idle current: 22 mA per side across R421/R422 after 15 minutes warm-up, lid on.\nOffset: under 10 mV; VR602 sets it.'
		},
		tech,
		new Date(nowMs - 140 * DAY_MS)
	);
	saveModelNotes(
		db,
		model.make,
		model.model,
		{
			version: first.notes?.version ?? 1,
			text: `${first.notes?.text ?? ''}\nThe original VR601 trimmers wear: replace rather than clean (three units so far).`
		},
		userIds.tech1,
		new Date(nowMs - 60 * DAY_MS + HOUR_MS)
	);
}
