// The demo shop's money: the sign-off demo unit carries the estimate its owner approved, with the
// deposit taken on the card terminal (so an invoice follows its sign-off), and a receiver whose
// estimate has just gone out and waits for the customer (its private link is printed once).
// Invented people, brands and figures.
import { and, eq } from 'drizzle-orm';
import type { Db } from '../src/lib/server/db/open';
import * as table from '../src/lib/server/db/schema';
import {
	buildSeenEstimate,
	estimateFingerprint,
	type EstimateLineInput
} from '../src/lib/server/estimate-hash';
import { currentPricing, saveEstimateDraft, sendEstimate } from '../src/lib/server/estimates';
import { env } from '../src/lib/server/env';

const HOUR_MS = 3600 * 1000;
const DAY_MS = 24 * HOUR_MS;

/** The receiver whose estimate awaits its owner in the demo. */
export const ESTIMATE_DEMO = { make: 'Ashgrove', model: 'AR-330' } as const;

export async function seedMoneyDemo(
	db: Db,
	userIds: Record<string, string>,
	nowMs: number,
	signOffDemo: { make: string; model: string }
): Promise<void> {
	approvedEstimateOnSignOffDemo(db, userIds, nowMs, signOffDemo);
	await estimateAwaitingCustomer(db, userIds, nowMs);
}

function approvedEstimateOnSignOffDemo(
	db: Db,
	userIds: Record<string, string>,
	nowMs: number,
	demo: { make: string; model: string }
): void {
	const job = db
		.select()
		.from(table.jobs)
		.where(and(eq(table.jobs.make, demo.make), eq(table.jobs.model, demo.model)))
		.get();
	if (!job) return;
	const customer = db.select().from(table.customers).where(eq(table.customers.id, job.customerId)).get()!;
	const parts = db.select().from(table.parts).where(eq(table.parts.jobId, job.id)).all();
	const lines: EstimateLineInput[] = [
		{ kind: 'fee', description: 'Diagnosis on the bench', amountMinor: 2500 },
		{ kind: 'labour', description: 'Recap the power supply, reset bias, bench test', durationMinutes: 120 },
		...parts.map((p) => ({
			kind: 'part' as const,
			description: `${p.refDes} ${p.description}${p.value ? ` ${p.value}` : ''}`,
			partId: p.id,
			quantity: p.quantity,
			unitCostMinor: p.unitCostCents
		}))
	];
	// Sent when the job began waiting for its owner, approved just before the repair began
	// (the job's history in seed.ts: a step every 8 hours from two days ago).
	const sentAt = new Date(nowMs - 2 * DAY_MS + 16 * HOUR_MS);
	const decidedAt = new Date(nowMs - 2 * DAY_MS + 23 * HOUR_MS);
	const pricing = currentPricing(db);
	db.transaction((tx) => {
		const row = tx
			.insert(table.estimates)
			.values({
				jobId: job.id,
				version: 1,
				status: 'draft',
				lines,
				createdBy: userIds.tech1,
				createdAt: sentAt,
				updatedAt: sentAt
			})
			.returning()
			.get();
		const seen = buildSeenEstimate({ estimateId: row.id, jobId: job.id, version: 1 }, lines, pricing);
		const { canonical, sha256 } = estimateFingerprint(seen);
		tx.update(table.estimates)
			.set({
				status: 'approved',
				pricing,
				seenJson: canonical,
				seenSha256: sha256,
				sentBy: userIds.supervisor,
				sentAt,
				updatedAt: decidedAt
			})
			.where(eq(table.estimates.id, row.id))
			.run();
		tx.insert(table.estimateDecisions)
			.values({
				estimateId: row.id,
				decision: 'approve',
				typedName: customer.name,
				seenSha256: sha256,
				decidedAt
			})
			.run();
		if (seen.depositMinor > 0)
			tx.insert(table.payments)
				.values({
					jobId: job.id,
					kind: 'deposit',
					method: 'card-terminal',
					amountMinor: seen.depositMinor,
					currency: seen.currency,
					reference: 'Terminal slip 0417',
					recordedBy: userIds.tech1,
					receivedAt: new Date(decidedAt.getTime() + HOUR_MS)
				})
				.run();
	});
}

async function estimateAwaitingCustomer(
	db: Db,
	userIds: Record<string, string>,
	nowMs: number
): Promise<void> {
	const startMs = nowMs - 3 * DAY_MS;
	const jobId = db.transaction((tx) => {
		const customerId = tx
			.insert(table.customers)
			.values({ name: 'Oswin Farrowdale', email: 'oswin.f@example.org', createdAt: new Date(startMs) })
			.returning({ id: table.customers.id })
			.get().id;
		const id = tx
			.insert(table.jobs)
			.values({
				customerId,
				category: 'receiver',
				make: ESTIMATE_DEMO.make,
				model: ESTIMATE_DEMO.model,
				serial: 'AG-330-20871',
				year: 1976,
				complaint: 'Tuner drifts off station; left channel cuts out when warm.',
				ratedPowerW: 35,
				ratedLoadOhms: 8,
				status: 'diagnosing',
				technicianId: userIds.tech2,
				createdAt: new Date(startMs),
				updatedAt: new Date(startMs + DAY_MS)
			})
			.returning({ id: table.jobs.id })
			.get().id;
		tx.insert(table.jobStatusHistory)
			.values([
				{
					jobId: id,
					userId: userIds.admin,
					fromStatus: null,
					toStatus: 'received',
					note: 'Taken in',
					createdAt: new Date(startMs)
				},
				{
					jobId: id,
					userId: userIds.tech2,
					fromStatus: 'received',
					toStatus: 'diagnosing',
					note: null,
					createdAt: new Date(startMs + DAY_MS)
				}
			])
			.run();
		tx.insert(table.workLog)
			.values({
				jobId: id,
				authorId: userIds.tech2,
				text: 'Left output relay contacts pitted; tuner AFC trimmer and two electrolytics in the IF strip read low.',
				minutes: 70,
				createdAt: new Date(startMs + DAY_MS + 2 * HOUR_MS)
			})
			.run();
		tx.insert(table.parts)
			.values([
				{
					jobId: id,
					refDes: 'RY1',
					description: 'Output relay',
					value: '24 V DPDT',
					quantity: 1,
					unitCostCents: 1450,
					state: 'ordered'
				},
				{
					jobId: id,
					refDes: 'C305, C306',
					description: 'IF strip electrolytic',
					value: '10 µF 50 V',
					quantity: 2,
					unitCostCents: 65,
					state: 'ordered'
				}
			])
			.run();
		return id;
	});
	const parts = db.select().from(table.parts).where(eq(table.parts.jobId, jobId)).all();
	const tech = { id: userIds.tech2, role: 'technician' as const };
	const draft = saveEstimateDraft(
		db,
		jobId,
		{
			lines: [
				{ kind: 'fee', description: 'Diagnosis on the bench', amountMinor: 2500 },
				{ kind: 'labour', description: 'Relay, IF capacitors, tuner alignment', durationMinutes: 150 },
				...parts.map((p) => ({
					kind: 'part' as const,
					description: `${p.refDes} ${p.description} ${p.value ?? ''}`.trim(),
					partId: p.id,
					quantity: p.quantity,
					unitCostMinor: p.unitCostCents
				}))
			],
			note: 'Alignment needs the unit for two more days after the parts arrive.'
		},
		tech,
		startMs + DAY_MS + 3 * HOUR_MS
	);
	const origin = env.ORIGIN ?? `http://localhost:${env.PORT}`;
	// No mail leaves the seed: the link is printed instead, once.
	const sent = await sendEstimate(
		db,
		draft.id,
		{ id: userIds.supervisor, role: 'supervisor' },
		{ origin, send: async () => ({ messageId: '<seed@benchlight.invalid>' }), nowMs: nowMs - 4 * HOUR_MS }
	);
	console.log(
		`Demo estimate awaiting its customer (${ESTIMATE_DEMO.make} ${ESTIMATE_DEMO.model}): ${sent.url}`
	);
}
