// The invented demo shop (`npm run seed`), and 10,000 extra jobs for the benchmark
// (`npm run seed:large`). Seeds only an empty database; the demo sign-ins exist nowhere else.
import { pathToFileURL } from 'node:url';
import { count } from 'drizzle-orm';
import { openDb, type Db } from '../src/lib/server/db/open';
import * as table from '../src/lib/server/db/schema';
import type { JobStatus, PartState, Role, UnitCategory } from '../src/lib/server/db/schema';
import { hashPassword } from '../src/lib/server/auth';
import { defaultSettings, updateSettings } from '../src/lib/server/settings';
import { createLimitProfile, seedLimitProfiles } from '../src/lib/server/limit-profiles';
import { createSnapshot } from '../src/lib/server/snapshots';
import { demoCapture } from './seed-capture';
import { LiveSeriesBuilder } from '../src/lib/soak/series';
import { env } from '../src/lib/server/env';
import { UNIT_CATEGORIES } from '../src/lib/schemas/enums';
import { seedWorksheetsDemo } from './seed-worksheets';
import { seedFiles } from './seed-files';
import { seedMoneyDemo } from './seed-money';
import { seedNotebookDemo } from './seed-notebook';

export const DEMO_PASSWORD = 'bench-demo-2026';
export const DEMO_SHOP_NAME = 'Quiet Valve Audio Works';

/** Demo staff. Invented people; these sign-ins belong to the demo seed only. */
export const DEMO_USERS: { key: string; email: string; name: string; role: Role }[] = [
	{ key: 'admin', email: 'admin@example.com', name: 'Ada Quennell', role: 'admin' },
	{ key: 'supervisor', email: 'supervisor@example.com', name: 'Rowan Thistlewood', role: 'supervisor' },
	{ key: 'tech1', email: 'tech1@example.com', name: 'Tamsin Oakridge', role: 'technician' },
	{ key: 'tech2', email: 'tech2@example.com', name: 'Niko Brambleton', role: 'technician' }
];

const CUSTOMERS = [
	{ name: 'Marlowe Quint', email: 'marlowe.quint@example.net', phone: '555-0141' },
	{ name: 'Ines Halloran-Vey', email: 'ines.hv@example.net', phone: '555-0178' },
	{ name: 'Percival Dunmore', email: null, phone: '555-0102' },
	{ name: 'Yuki Talbridge', email: 'yuki.talbridge@example.org', phone: null },
	{ name: 'Femi Ashcombe', email: 'femi@example.org', phone: '555-0190' },
	{ name: 'Lotte Ravenhurst', email: 'lotte.r@example.net', phone: '555-0115' },
	{ name: 'Caspar Wynfield', email: null, phone: '555-0133' },
	{ name: 'Hedda Moorcroft', email: 'hedda.moorcroft@example.com', phone: '555-0164' },
	{ name: 'Bram Ellsworthy', email: 'bram.e@example.org', phone: null },
	{ name: 'Solène Marchetti-Hale', email: 'solene.mh@example.net', phone: '555-0126' },
	{ name: 'Teodor Quillan', email: 'teodor.q@example.com', phone: '555-0187' },
	{ name: 'Wren Castellow', email: 'wren.castellow@example.org', phone: '555-0159' }
];

/** Invented makers; none is a real brand. */
const MAKES = ['Corvane', 'Velmora', 'Brixane', 'Orlund', 'Halvane', 'Stennick', 'Tessaline', 'Marrowby'];

/** The usual road through the shop, used to write believable history. */
const PATH: JobStatus[] = [
	'received',
	'diagnosing',
	'awaiting-parts',
	'repairing',
	'testing',
	'awaiting-review',
	'approved',
	'returned'
];

interface DemoPart {
	refDes: string;
	description: string;
	value: string | null;
	quantity: number;
	unitCostCents: number;
	supplier: string;
	state: PartState;
	verificationNote: string | null;
}

interface DemoJob {
	customer: number;
	category: UnitCategory;
	make: string;
	model: string;
	serial: string;
	year: number;
	complaint: string;
	ratedPowerW: number | null;
	ratedLoadOhms: number | null;
	/** The road taken, ending in the current status. */
	statuses: JobStatus[];
	technician: 'tech1' | 'tech2' | null;
	promisedInDays: number | null;
	ageDays: number;
	log: { text: string; minutes: number }[];
	parts: DemoPart[];
}

const upTo = (status: JobStatus) => PATH.slice(0, PATH.indexOf(status) + 1);

const DEMO_JOBS: DemoJob[] = [
	{
		customer: 0,
		category: 'receiver',
		make: 'Corvane',
		model: 'CR-7400',
		serial: 'C74-118203',
		year: 1977,
		complaint: 'Dead: no dial lamps, no sound. Owner says it went off with a bang.',
		ratedPowerW: 60,
		ratedLoadOhms: 8,
		statuses: upTo('received'),
		technician: null,
		promisedInDays: 14,
		ageDays: 1,
		log: [],
		parts: []
	},
	{
		customer: 1,
		category: 'integrated-amplifier',
		make: 'Velmora',
		model: 'VA-120',
		serial: 'VA120-00457',
		year: 1981,
		complaint: 'Hum in both channels, louder once warm. Volume control crackles.',
		ratedPowerW: 45,
		ratedLoadOhms: 8,
		statuses: upTo('diagnosing'),
		technician: 'tech1',
		promisedInDays: 10,
		ageDays: 3,
		log: [
			{
				text: 'Mains fuse correct value (T2A). Hum at 100 Hz on both rails: main filter capacitors suspected.',
				minutes: 40
			}
		],
		parts: []
	},
	{
		customer: 2,
		category: 'power-amplifier',
		make: 'Halvane',
		model: 'HP-250',
		serial: 'HP2-30991',
		year: 1984,
		complaint: 'Right channel protection relay drops out after a minute of play.',
		ratedPowerW: 125,
		ratedLoadOhms: 8,
		statuses: upTo('awaiting-parts'),
		technician: 'tech2',
		promisedInDays: 21,
		ageDays: 6,
		log: [
			{
				text: 'Right channel DC offset drifts to 180 mV when warm. Q412 leaky (checked out of circuit).',
				minutes: 75
			},
			{ text: 'Ordered matched output pair and relay. Told customer about two-week wait.', minutes: 15 }
		],
		parts: [
			{
				refDes: 'Q412',
				description: 'Output transistor, NPN',
				value: '230 V 15 A',
				quantity: 2,
				unitCostCents: 645,
				supplier: 'Northbank Components',
				state: 'ordered',
				verificationNote: null
			},
			{
				refDes: 'RL1',
				description: 'Speaker protection relay, 24 V coil',
				value: '24 V DPDT',
				quantity: 1,
				unitCostCents: 890,
				supplier: 'Northbank Components',
				state: 'ordered',
				verificationNote: null
			}
		]
	},
	{
		customer: 3,
		category: 'preamplifier',
		make: 'Brixane',
		model: 'BX-33',
		serial: 'BX33-7720',
		year: 1979,
		complaint: 'Scratchy volume and balance; left channel cuts out when the selector is touched.',
		ratedPowerW: null,
		ratedLoadOhms: null,
		statuses: upTo('repairing'),
		technician: 'tech1',
		promisedInDays: 5,
		ageDays: 9,
		log: [
			{
				text: 'Selector contacts oxidised on the left deck. Cleaned and lubricated; volume pot cleaned.',
				minutes: 55
			},
			{ text: 'Replacing the dried coupling capacitors on the phono stage.', minutes: 30 }
		],
		parts: [
			{
				refDes: 'C105',
				description: 'Film capacitor, coupling',
				value: '2.2 µF 63 V',
				quantity: 2,
				unitCostCents: 180,
				supplier: 'Relay & Reel Supply',
				state: 'fitted',
				verificationNote: 'Capacitance 2.21 µF measured'
			},
			{
				refDes: 'C12',
				description: 'Electrolytic capacitor, 105 °C',
				value: '470 µF 35 V',
				quantity: 4,
				unitCostCents: 95,
				supplier: 'Relay & Reel Supply',
				state: 'received',
				verificationNote: 'Sleeve print and vent crisp; ESR in spec'
			}
		]
	},
	{
		customer: 4,
		category: 'tuner',
		make: 'Orlund',
		model: 'OT-55',
		serial: 'OT55-2211',
		year: 1983,
		complaint: 'Stereo lamp flickers, FM weak and noisy.',
		ratedPowerW: null,
		ratedLoadOhms: null,
		statuses: upTo('testing'),
		technician: 'tech2',
		promisedInDays: 3,
		ageDays: 12,
		log: [
			{ text: 'Multiplex decoder realigned, dial lamp replaced.', minutes: 90 },
			{
				text: 'Played on the bench for two hours with someone at the bench throughout: stereo lock stayed stable. Switched off before leaving.',
				minutes: 10
			}
		],
		parts: [
			{
				refDes: 'PL1',
				description: 'Dial lamp, wedge base',
				value: '8 V 0.3 A',
				quantity: 1,
				unitCostCents: 240,
				supplier: 'Northbank Components',
				state: 'fitted',
				verificationNote: null
			}
		]
	},
	{
		customer: 5,
		category: 'turntable',
		make: 'Tessaline',
		model: 'TL-2',
		serial: 'TL2-05561',
		year: 1976,
		complaint: 'Speed drifts slow on long sides; motor hums audibly.',
		ratedPowerW: null,
		ratedLoadOhms: null,
		statuses: upTo('awaiting-review'),
		technician: 'tech1',
		promisedInDays: 2,
		ageDays: 15,
		log: [
			{ text: 'Belt glazed and stretched; replaced. Motor bearings cleaned and oiled.', minutes: 60 },
			{
				text: 'Speed within 0.3 % at 33⅓ over a full side. Motor hum gone after remounting grommets.',
				minutes: 35
			}
		],
		parts: [
			{
				refDes: 'BELT1',
				description: 'Flat drive belt',
				value: '540 mm × 5 mm',
				quantity: 1,
				unitCostCents: 1250,
				supplier: 'Relay & Reel Supply',
				state: 'fitted',
				verificationNote: 'Length checked against old belt (relaxed)'
			},
			{
				refDes: 'GR1',
				description: 'Motor mount grommets',
				value: null,
				quantity: 3,
				unitCostCents: 60,
				supplier: 'Relay & Reel Supply',
				state: 'fitted',
				verificationNote: null
			}
		]
	},
	{
		customer: 6,
		category: 'tape-deck',
		make: 'Stennick',
		model: 'ST-9',
		serial: 'ST9-44012',
		year: 1980,
		complaint: 'Left channel dull, no top end on playback.',
		ratedPowerW: null,
		ratedLoadOhms: null,
		statuses: upTo('approved'),
		technician: 'tech2',
		promisedInDays: -1,
		ageDays: 20,
		log: [
			{ text: 'Heads cleaned and demagnetised; azimuth was off. Pinch roller replaced.', minutes: 80 },
			{ text: 'Response within ±2 dB to 14 kHz on both channels after adjustment.', minutes: 45 }
		],
		parts: [
			{
				refDes: 'PR1',
				description: 'Pinch roller',
				value: '13 mm',
				quantity: 1,
				unitCostCents: 1890,
				supplier: 'Northbank Components',
				state: 'fitted',
				verificationNote: 'Shore hardness matches the original'
			}
		]
	},
	{
		customer: 7,
		category: 'other',
		make: 'Marrowby',
		model: 'MB-40 headphone amplifier',
		serial: 'MB40-0098',
		year: 1988,
		complaint: 'Crackling in the right earpiece when the level is turned.',
		ratedPowerW: 1,
		ratedLoadOhms: 32,
		statuses: upTo('returned'),
		technician: 'tech1',
		promisedInDays: -8,
		ageDays: 30,
		log: [{ text: 'Level pot worn through on the right track. Replaced; crackle gone.', minutes: 35 }],
		parts: [
			{
				refDes: 'VR1',
				description: 'Dual potentiometer, log taper',
				value: '50 kΩ A',
				quantity: 1,
				unitCostCents: 760,
				supplier: 'Relay & Reel Supply',
				state: 'fitted',
				verificationNote: 'Track matching within 1 dB measured'
			}
		]
	},
	{
		customer: 8,
		category: 'receiver',
		make: 'Corvane',
		model: 'CR-5200',
		serial: 'C52-09931',
		year: 1975,
		complaint: 'Dial lamps out and the tuning dial is stuck.',
		ratedPowerW: 40,
		ratedLoadOhms: 8,
		statuses: [...upTo('awaiting-parts'), 'on-hold'],
		technician: 'tech2',
		promisedInDays: null,
		ageDays: 25,
		log: [
			{
				text: 'Dial cord snapped. Waiting on the customer to approve the cost of a restring and lamps.',
				minutes: 25
			}
		],
		parts: [
			{
				refDes: 'CORD1',
				description: 'Dial cord',
				value: '0.5 mm braided',
				quantity: 1,
				unitCostCents: 450,
				supplier: 'Northbank Components',
				state: 'ordered',
				verificationNote: null
			}
		]
	},
	{
		customer: 9,
		category: 'power-amplifier',
		make: 'Velmora',
		model: 'VP-400',
		serial: 'VP4-11870',
		year: 1986,
		complaint: 'Blows the mains fuse at switch-on.',
		ratedPowerW: 200,
		ratedLoadOhms: 4,
		statuses: ['received', 'diagnosing', 'declined'],
		technician: 'tech1',
		promisedInDays: null,
		ageDays: 18,
		log: [
			{
				text: 'All four output devices on the left channel shorted, driver board scorched. Estimate declined by owner.',
				minutes: 50
			}
		],
		parts: []
	},
	{
		customer: 10,
		category: 'integrated-amplifier',
		make: 'Orlund',
		model: 'OA-90',
		serial: 'OA90-3305',
		year: 1990,
		complaint: 'Sound cuts out now and then; relay chatters.',
		ratedPowerW: 90,
		ratedLoadOhms: 8,
		statuses: upTo('repairing'),
		technician: 'tech2',
		promisedInDays: 7,
		ageDays: 8,
		log: [
			{
				text: 'Cold joints on the relay and the regulator pins. Reflowed; replacing the relay anyway.',
				minutes: 45
			}
		],
		parts: [
			{
				refDes: 'RL2',
				description: 'Speaker relay, 12 V coil',
				value: '12 V DPDT',
				quantity: 1,
				unitCostCents: 720,
				supplier: 'Northbank Components',
				state: 'received',
				verificationNote: 'Contact rating printed, coil 12 V measured 400 Ω'
			}
		]
	},
	{
		customer: 11,
		category: 'receiver',
		make: 'Halvane',
		model: 'HR-330',
		serial: 'HR3-60214',
		year: 1978,
		complaint: 'Left channel weak and distorted since a thunderstorm.',
		ratedPowerW: 35,
		ratedLoadOhms: 8,
		statuses: upTo('awaiting-review'),
		technician: 'tech1',
		promisedInDays: 4,
		ageDays: 14,
		log: [
			{
				text: 'Left driver transistor open, bias resistor burnt. Replaced both; first power-up on the lamp limiter, then bias set to the service figure at full mains after warm-up.',
				minutes: 95
			},
			{
				text: 'One-hour soak at one-eighth power, watched at the bench: heatsink settled at 48 °C.',
				minutes: 70
			}
		],
		parts: [
			{
				refDes: 'Q305',
				description: 'Driver transistor, PNP',
				value: '160 V 1.5 A',
				quantity: 1,
				unitCostCents: 310,
				supplier: 'Northbank Components',
				state: 'fitted',
				verificationNote: 'hFE 118 measured; markings and weight checked'
			},
			{
				refDes: 'R321',
				description: 'Bias resistor, metal film',
				value: '220 Ω 0.5 W',
				quantity: 1,
				unitCostCents: 25,
				supplier: 'Relay & Reel Supply',
				state: 'fitted',
				verificationNote: null
			}
		]
	},
	{
		customer: 0,
		category: 'preamplifier',
		make: 'Stennick',
		model: 'SP-7',
		serial: 'SP7-1403',
		year: 1985,
		complaint: 'Phono input very quiet and thin.',
		ratedPowerW: null,
		ratedLoadOhms: null,
		statuses: upTo('received'),
		technician: null,
		promisedInDays: 20,
		ageDays: 0,
		log: [],
		parts: []
	},
	{
		customer: 3,
		category: 'tape-deck',
		make: 'Brixane',
		model: 'BX-D2',
		serial: 'BXD2-8812',
		year: 1982,
		complaint: 'Will not fast-forward; counter stuck.',
		ratedPowerW: null,
		ratedLoadOhms: null,
		statuses: upTo('diagnosing'),
		technician: 'tech2',
		promisedInDays: 12,
		ageDays: 2,
		log: [],
		parts: []
	}
];

const DAY_MS = 24 * 3600 * 1000;
const HOUR_MS = 3600 * 1000;

function isoDay(ms: number): string {
	return new Date(ms).toISOString().slice(0, 10);
}

/**
 * Seed the demo shop when there are no users yet. Returns whether it seeded anything.
 * Idempotent: a second call on a seeded database changes nothing.
 */
export async function seedDemo(db: Db, options: { now?: Date } = {}): Promise<boolean> {
	const existing = db.select({ n: count() }).from(table.users).get();
	if ((existing?.n ?? 0) > 0) return false;

	// argon2 is asynchronous; better-sqlite3 transactions are not: hash first.
	const hashes = await Promise.all(DEMO_USERS.map(() => hashPassword(DEMO_PASSWORD)));
	const nowMs = (options.now ?? new Date()).getTime();
	const userIds: Record<string, string> = {};
	DEMO_USERS.forEach((u) => (userIds[u.key] = `demo${u.key}`));

	db.transaction((tx) => {
		DEMO_USERS.forEach((u, i) => {
			const at = new Date(nowMs - 90 * DAY_MS);
			tx.insert(table.users)
				.values({
					id: userIds[u.key],
					email: u.email,
					name: u.name,
					role: u.role,
					passwordHash: hashes[i],
					createdAt: at,
					updatedAt: at
				})
				.run();
		});

		const customerIds = CUSTOMERS.map(
			(c, i) =>
				tx
					.insert(table.customers)
					.values({ ...c, createdAt: new Date(nowMs - (60 - i) * DAY_MS) })
					.returning({ id: table.customers.id })
					.get().id
		);

		for (const j of DEMO_JOBS) {
			const createdMs = nowMs - j.ageDays * DAY_MS - 3 * HOUR_MS;
			const techId = j.technician ? userIds[j.technician] : null;
			// Spread the status steps over the job's age so history reads in order.
			const stepMs = Math.max(HOUR_MS, ((j.ageDays * DAY_MS) / Math.max(1, j.statuses.length)) * 0.8);
			const stepAt = (i: number) => new Date(createdMs + i * stepMs);
			const lastAt = stepAt(j.statuses.length - 1);
			const job = tx
				.insert(table.jobs)
				.values({
					customerId: customerIds[j.customer],
					category: j.category,
					make: j.make,
					model: j.model,
					serial: j.serial,
					year: j.year,
					complaint: j.complaint,
					ratedPowerW: j.ratedPowerW,
					ratedLoadOhms: j.ratedLoadOhms,
					// The demo units' ratings are all continuous per channel, both driven, at 0.1 % THD (invented).
					ratedPowerBasis: j.ratedPowerW === null ? null : 'continuous-per-channel',
					ratedThdPercent: j.ratedPowerW === null ? null : 0.1,
					status: j.statuses[j.statuses.length - 1],
					technicianId: techId,
					promisedDate: j.promisedInDays === null ? null : isoDay(nowMs + j.promisedInDays * DAY_MS),
					createdAt: new Date(createdMs),
					updatedAt: lastAt
				})
				.returning({ id: table.jobs.id })
				.get();

			j.statuses.forEach((status, i) => {
				const by =
					status === 'approved'
						? userIds.supervisor
						: i === 0
							? userIds.admin
							: (techId ?? userIds.supervisor);
				const note =
					i === 0
						? 'Taken in'
						: status === 'on-hold'
							? 'Waiting for the customer to approve the estimate'
							: status === 'declined'
								? 'Customer declined the estimate'
								: null;
				tx.insert(table.jobStatusHistory)
					.values({
						jobId: job.id,
						userId: by,
						fromStatus: i === 0 ? null : j.statuses[i - 1],
						toStatus: status,
						note,
						createdAt: stepAt(i)
					})
					.run();
			});

			j.log.forEach((entry, i) => {
				tx.insert(table.workLog)
					.values({
						jobId: job.id,
						authorId: techId ?? userIds.supervisor,
						text: entry.text,
						minutes: entry.minutes,
						createdAt: new Date(Math.min(lastAt.getTime(), createdMs + (i + 1) * stepMs * 0.9))
					})
					.run();
			});

			for (const p of j.parts) {
				tx.insert(table.parts)
					.values({ jobId: job.id, ...p, createdAt: new Date(createdMs + stepMs), updatedAt: lastAt })
					.run();
			}
		}
	});

	const defaults = defaultSettings();
	updateSettings(db, {
		...defaults,
		shopName: DEMO_SHOP_NAME,
		// Invented contact lines for the demo shop's customer reports.
		customerReport: {
			...defaults.customerReport,
			address: '14 Kettering Row, Ashwell Quay',
			phone: '+44 20 7946 0321',
			email: 'bench@example.com',
			footer: 'Thank you for trusting us with your equipment.'
		}
	});
	seedLimitProfiles(db, userIds.supervisor);
	seedSignOffDemo(db, userIds, nowMs);
	seedWorksheetsDemo(db, userIds, nowMs, SIGN_OFF_DEMO);
	seedNotebookDemo(db, userIds, nowMs, SIGN_OFF_DEMO);
	await seedFiles(db, userIds.tech1);
	await seedMoneyDemo(db, userIds, nowMs, SIGN_OFF_DEMO);
	return true;
}

/** The demo job a supervisor can sign off: its make and model, so tests and people can find it. */
export const SIGN_OFF_DEMO = { make: 'Pellowmere', model: 'SA-150' } as const;

/**
 * One power amplifier awaiting sign-off, with what the shop requires: a before snapshot that
 * failed (the right output device clips early, tired reservoir capacitors), an after snapshot that passes, and a one-hour soak at real time
 * that passed, so a supervisor can review and sign it from `npm start`.
 */
function seedSignOffDemo(db: Db, userIds: Record<string, string>, nowMs: number): void {
	const tech = userIds.tech1;
	const startMs = nowMs - 2 * DAY_MS;
	const jobId = db.transaction((tx) => {
		const customerId = tx
			.insert(table.customers)
			.values({
				name: 'Agathe Lindqvist-Oyelaran',
				email: 'agathe.lo@example.net',
				createdAt: new Date(startMs)
			})
			.returning({ id: table.customers.id })
			.get().id;
		const id = tx
			.insert(table.jobs)
			.values({
				customerId,
				category: 'power-amplifier',
				make: SIGN_OFF_DEMO.make,
				model: SIGN_OFF_DEMO.model,
				serial: 'PM-40417',
				year: 1979,
				complaint: 'Right channel distorts at moderate volume; hum after warm-up',
				ratedPowerW: 75,
				ratedLoadOhms: 8,
				status: 'awaiting-review',
				technicianId: tech,
				promisedDate: isoDay(nowMs + 3 * DAY_MS),
				createdAt: new Date(startMs),
				updatedAt: new Date(nowMs - HOUR_MS)
			})
			.returning({ id: table.jobs.id })
			.get().id;
		// The owner approved the estimate from their link (scripts/seed-money.ts) before the repair.
		const path: JobStatus[] = [
			'received',
			'diagnosing',
			'awaiting-approval',
			'repairing',
			'testing',
			'awaiting-review'
		];
		path.forEach((status, i) =>
			tx
				.insert(table.jobStatusHistory)
				.values({
					jobId: id,
					// The customer's approval from their link moved it to repairing: no staff member.
					userId: i === 0 ? userIds.admin : path[i - 1] === 'awaiting-approval' ? null : tech,
					fromStatus: i === 0 ? null : path[i - 1],
					toStatus: status,
					note: i === 0 ? 'Taken in' : null,
					createdAt: new Date(startMs + i * 8 * HOUR_MS)
				})
				.run()
		);
		tx.insert(table.workLog)
			.values([
				{
					jobId: id,
					authorId: tech,
					text: 'Replaced both main filter capacitors; rails now clean.',
					minutes: 55,
					forCustomer: true,
					createdAt: new Date(startMs + 9 * HOUR_MS)
				},
				{
					jobId: id,
					authorId: tech,
					text: 'Reset bias to 22 mA per side after the recap.',
					minutes: 25,
					createdAt: new Date(startMs + 10 * HOUR_MS)
				}
			])
			.run();
		tx.insert(table.parts)
			.values([
				{
					jobId: id,
					refDes: 'C401, C402',
					description: 'Main filter capacitor',
					value: '10000 µF 63 V',
					quantity: 2,
					unitCostCents: 1890,
					supplier: 'Fennick Components',
					state: 'fitted',
					verificationNote: 'Weight and sleeve print match the maker’s datasheet',
					createdAt: new Date(startMs + 8 * HOUR_MS),
					updatedAt: new Date(startMs + 9 * HOUR_MS)
				},
				{
					jobId: id,
					refDes: 'VR601',
					description: 'Bias trimmer',
					value: '500 Ω',
					quantity: 1,
					unitCostCents: 240,
					supplier: 'Fennick Components',
					state: 'fitted',
					verificationNote: null,
					createdAt: new Date(startMs + 8 * HOUR_MS),
					updatedAt: new Date(startMs + 10 * HOUR_MS)
				}
			])
			.run();
		return id;
	});

	// A profile of its own, so the demo verdicts do not hang on the bench profiles' conditions.
	const profile = createLimitProfile(
		db,
		{
			name: 'Sign-off demo: THD+N at 1 kHz',
			description:
				'THD+N at most 0.1 % on each channel at 1 kHz. Common practice for a healthy solid-state amplifier.',
			conditions: { generatorFrequencyHz: 1000 },
			limits: [{ metric: 'thdnPercent', channel: 'each', op: 'le', value: 0.1, unit: '%' }]
		},
		userIds.supervisor
	);
	// 10 W into 8 Ω (8.9 V rms) at 1 kHz: the generator's 0.447 V rms through the unit's 26 dB.
	const drive = { frequencyHz: 1000, levelVrms: 0.447 };
	// As received: the right output device clips early and the reservoir capacitors are tired.
	const before = demoCapture({
		tone: drive,
		sim: { faults: { weakOutputDevice: 'right', tiredFilterCap: true } },
		seed: 21
	});
	createSnapshot(db, {
		jobId,
		userId: tech,
		wav: before.wav,
		meta: {
			...before.meta,
			label: 'Before: as received, 10 W at 1 kHz',
			stage: 'before',
			profileId: profile.id
		}
	});
	const after = demoCapture({ tone: drive, seed: 22 });
	createSnapshot(db, {
		jobId,
		userId: tech,
		wav: after.wav,
		meta: {
			...after.meta,
			label: 'After: recap and bias, 10 W at 1 kHz',
			stage: 'after',
			profileId: profile.id
		}
	});

	// A one-hour soak at real time (time scale 1) at one-eighth power, readings every 30 s.
	const runStartMs = nowMs - 5 * HOUR_MS;
	const durationS = 3600;
	const probes = { 'heatsink-left': 47, 'heatsink-right': 48.5, transformer: 41, ambient: 23 } as const;
	const readings: { probe: string; seq: number; t: number; celsius: number }[] = [];
	let seq = 1;
	for (let s = 0; s <= durationS; s += 30) {
		for (const [probe, finalC] of Object.entries(probes)) {
			// First-order warm-up from 23 °C with a 12-minute time constant.
			const c = 23 + (finalC - 23) * (1 - Math.exp(-s / 720));
			readings.push({ probe, seq: seq++, t: runStartMs + s * 1000, celsius: Math.round(c * 10) / 10 });
		}
	}
	const summaryProbes: Record<
		string,
		{ maxC: number; maxAtS: number; finalC: number; finalAtS: number; readings: number }
	> = {};
	for (const probe of Object.keys(probes)) {
		const mine = readings.filter((r) => r.probe === probe);
		const last = mine[mine.length - 1];
		const max = mine.reduce((a, b) => (b.celsius > a.celsius ? b : a));
		summaryProbes[probe] = {
			maxC: max.celsius,
			maxAtS: (max.t - runStartMs) / 1000,
			finalC: last.celsius,
			finalAtS: (last.t - runStartMs) / 1000,
			readings: mine.length
		};
	}
	db.transaction((tx) => {
		const runId = tx
			.insert(table.soakRuns)
			.values({
				jobId,
				createdBy: tech,
				preset: 'eighth-power-60',
				frequencyHz: 1000,
				loadOhms: 8,
				drivePowerW: 75 / 8,
				driveVrms: Math.sqrt((75 / 8) * 8),
				durationS,
				timeScale: 1,
				startSeq: 0,
				channels: ['left', 'right'],
				limits: { ...defaultSettings().soakDefaultLimits },
				probes: Object.keys(probes),
				status: 'passed',
				startedAt: new Date(runStartMs),
				endedAt: new Date(runStartMs + durationS * 1000),
				summary: {
					probes: summaryProbes,
					steadyStateS: 2700,
					thdnEndPercent: null,
					breaches: [],
					gaps: [],
					coveredS: durationS,
					incomplete: false
				},
				createdAt: new Date(runStartMs)
			})
			.returning({ id: table.soakRuns.id })
			.get().id;
		for (const r of readings)
			tx.insert(table.soakReadings)
				.values({ runId, bootId: 'demo', ...r })
				.run();
		// The run's chart buckets, as the server keeps them while readings arrive.
		const series = new LiveSeriesBuilder({ startedAtMs: runStartMs, durationS, timeScale: 1 });
		for (const r of readings) series.add(r);
		const rows = series.rows().map((b) => ({ runId, ...b }));
		if (rows.length) tx.insert(table.soakSeries).values(rows).run();
	});
}

/** A small deterministic generator (mulberry32) so the large seed is the same every time. */
function rng(seed: number): () => number {
	let a = seed >>> 0;
	return () => {
		a = (a + 0x6d2b79f5) >>> 0;
		let t = a;
		t = Math.imul(t ^ (t >>> 15), t | 1);
		t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
		return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
	};
}

const SYLLABLES = [
	'al',
	'bre',
	'cor',
	'dan',
	'el',
	'fen',
	'gar',
	'hol',
	'is',
	'jor',
	'kel',
	'lun',
	'mar',
	'nor',
	'ost',
	'pel',
	'quin',
	'ros',
	'sel',
	'tor',
	'ul',
	'ven',
	'wyn',
	'yar',
	'zel'
];
const COMPLAINTS = [
	'Dead, no sound',
	'Hum in both channels',
	'One channel weak',
	'Scratchy volume control',
	'Distorts at moderate level',
	'Relay clicks but no output',
	'Blows fuses at switch-on',
	'Intermittent left channel',
	'Noisy selector switch',
	'Runs hot and shuts down',
	'Motor speed drifts',
	'Dull high end on playback'
];

/**
 * Add `jobCount` generated jobs (with customers and a history row each) in one transaction
 * through prepared statements: the benchmark's 10,000-job queue.
 */
export function seedLarge(db: Db, jobCount = 10_000, options: { seed?: number; now?: Date } = {}): number {
	const random = rng(options.seed ?? 2026);
	const pick = <T>(list: readonly T[]): T => list[Math.floor(random() * list.length)];
	const nowMs = (options.now ?? new Date()).getTime();
	const sqlite = db.$client;
	const staff = sqlite
		.prepare("SELECT id FROM users WHERE active = 1 AND role IN ('technician', 'supervisor')")
		.all() as { id: string }[];
	const staffIds = staff.map((s) => s.id);

	const name = () => {
		const part = () => {
			const s = pick(SYLLABLES) + pick(SYLLABLES);
			return s[0].toUpperCase() + s.slice(1);
		};
		return `${part()} ${part()}${pick(SYLLABLES)}`;
	};

	const insertCustomer = sqlite.prepare(
		'INSERT INTO customers (name, email, phone, created_at) VALUES (?, ?, ?, ?)'
	);
	const insertJob = sqlite.prepare(
		`INSERT INTO jobs (customer_id, category, make, model, serial, year, complaint, rated_power_w, rated_load_ohms,
		  status, technician_id, promised_date, created_at, updated_at) VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?)`
	);
	const insertHistory = sqlite.prepare(
		'INSERT INTO job_status_history (job_id, user_id, from_status, to_status, note, created_at) VALUES (?, ?, ?, ?, ?, ?)'
	);
	const statuses: JobStatus[] = [...PATH, 'on-hold', 'declined'];

	sqlite.transaction(() => {
		const customerIds: number[] = [];
		const customerCount = Math.max(1, Math.round(jobCount / 5));
		for (let i = 0; i < customerCount; i++) {
			const n = name();
			const email = random() < 0.7 ? `${n.toLowerCase().replace(/[^a-z]+/g, '.')}.${i}@example.net` : null;
			const info = insertCustomer.run(
				n,
				email,
				random() < 0.6 ? `555-${String(1000 + i).slice(-4)}` : null,
				nowMs - 800 * DAY_MS
			);
			customerIds.push(Number(info.lastInsertRowid));
		}
		for (let i = 0; i < jobCount; i++) {
			const createdMs = nowMs - Math.floor(random() * 730 * DAY_MS);
			const updatedMs = Math.min(nowMs, createdMs + Math.floor(random() * 40 * DAY_MS));
			const status = pick(statuses);
			const category = pick(UNIT_CATEGORIES);
			const make = pick(MAKES);
			const model = `${make.slice(0, 2).toUpperCase()}-${100 + Math.floor(random() * 900)}`;
			const amp = category.includes('amplifier') || category === 'receiver';
			const info = insertJob.run(
				pick(customerIds),
				category,
				make,
				model,
				`${model}-${10000 + i}`,
				1965 + Math.floor(random() * 35),
				pick(COMPLAINTS),
				amp ? pick([25, 40, 60, 100, 150]) : null,
				amp ? pick([4, 8]) : null,
				status,
				staffIds.length && random() < 0.85 ? pick(staffIds) : null,
				random() < 0.6 ? isoDay(createdMs + (7 + Math.floor(random() * 30)) * DAY_MS) : null,
				createdMs,
				updatedMs
			);
			insertHistory.run(Number(info.lastInsertRowid), null, null, 'received', 'Taken in', createdMs);
		}
	})();
	return jobCount;
}

async function main(): Promise<void> {
	const large = process.argv.includes('--large');
	const url = env.DATABASE_URL;
	const db = openDb(url);
	try {
		const seeded = await seedDemo(db);
		console.log(
			seeded ? `Seeded the demo shop into ${url}.` : `${url} already has users: demo seed skipped.`
		);
		if (large) {
			const jobs = db.select({ n: count() }).from(table.jobs).get()?.n ?? 0;
			if (jobs >= 10_000) {
				console.log(`${url} already holds ${jobs} jobs: large seed skipped.`);
			} else {
				const t0 = performance.now();
				seedLarge(db, 10_000);
				console.log(`Added 10,000 generated jobs in ${Math.round(performance.now() - t0)} ms.`);
			}
		}
		if (seeded) {
			console.log('Demo sign-ins (password bench-demo-2026):');
			for (const u of DEMO_USERS) console.log(`  ${u.email.padEnd(24)} ${u.role}`);
		}
	} finally {
		db.$client.close();
	}
}

if (process.argv[1] && import.meta.url === pathToFileURL(process.argv[1]).href) {
	main().catch((e) => {
		console.error(e);
		process.exit(1);
	});
}
