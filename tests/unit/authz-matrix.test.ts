// The authorization matrix: every API route file and method under src/routes/api, with the
// status expected for signed-out, technician, supervisor and admin callers, run against
// the real handlers on the app's database (in memory in tests, seeded with the demo shop).
// Route files are found on disk; a route or method without a row here fails the suite.
// Pages and form actions have their own matrix (authz-pages.test.ts); both share fixtures.
import { beforeAll, describe, expect, it } from 'vitest';
import { join, relative } from 'node:path';
import { pathToFileURL } from 'node:url';
import { isHttpError, isRedirect, type RequestEvent } from '@sveltejs/kit';
import { DEMO_PASSWORD } from '../../scripts/seed';
import { createRun } from '$lib/server/soak';
import { createLimitProfile } from '$lib/server/limit-profiles';
import type { ProfileInputRaw } from '$lib/limit-profiles';
import { createSnapshot } from '$lib/server/snapshots';
import { recordProcedureRun } from '$lib/server/procedures';
import { encodeWav } from '$lib/dsp';
import { isWrapped } from '$lib/server/handlers';
import { emptySheet } from '$lib/schemas/worksheets';
import { blobStoreFor } from '$lib/server/storage';
import * as table from '$lib/server/db/schema';
import {
	ROLES,
	ROUTES_DIR,
	fakeCookies,
	fillRoute,
	findServerFiles,
	routeIdOf,
	setupFixtures,
	useSavepoints,
	type Caller,
	type Fixtures,
	type Who
} from './authz-fixtures';

/** A running one-hour soak on the fixture job (inside the case's savepoint), as a route param. */
function soakRun(fx: Fixtures, startedAtMs = Date.now()): string {
	const custom = {
		watts: 5,
		loadOhms: 8,
		frequencyHz: 1000,
		durationS: 3600,
		channels: ['left' as const, 'right' as const]
	};
	return String(createRun(fx.db, fx.jobId, fx.users.tech1, { preset: 'custom', custom }, startedAtMs).id);
}

/** A valid limit profile body. */
function matrixProfile(name: string): ProfileInputRaw {
	return {
		name,
		conditions: { generatorFrequencyHz: 1000 },
		limits: [{ metric: 'thdnPercent', channel: 'each', op: 'le', value: 0.1, unit: '%' }]
	};
}

/** A limit profile created inside the case's savepoint, as a route param. */
function profileIn(fx: Fixtures): string {
	return String(createLimitProfile(fx.db, matrixProfile('Matrix fixture profile'), fx.users.supervisor).id);
}

function matrixWav(): Uint8Array {
	const n = 8192;
	const tone = new Float32Array(n);
	for (let i = 0; i < n; i++) tone[i] = 0.5 * Math.sin((2 * Math.PI * 1000 * i) / 48000);
	return encodeWav([tone], 48000);
}

/** A multipart capture (`samples` WAV + `meta` JSON) for the snapshot upload. */
function snapshotForm(): FormData {
	const form = new FormData();
	form.set('samples', new Blob([matrixWav() as BlobPart], { type: 'audio/wav' }), 'capture.wav');
	form.set('meta', JSON.stringify({ label: 'Matrix capture', stage: 'before' }));
	return form;
}

/** A snapshot stored inside the case's savepoint (rolled back after; no DELETE, so the immutability triggers allow it). */
function snapshotIn(fx: Fixtures): string {
	const created = createSnapshot(fx.db, {
		jobId: fx.jobId,
		userId: fx.users.tech1,
		wav: matrixWav(),
		meta: { label: 'Matrix snapshot', stage: 'after' }
	});
	return String(created.id);
}

/** A small response sweep as the bench uploads it. */
function matrixSweep() {
	return {
		kind: 'response',
		label: 'Matrix sweep',
		perOctave: 3,
		settleMs: 200,
		generatorVrms: 0.5,
		bandHz: [20, 20_000],
		limitPlusMinusDb: 1,
		steps: [
			{ frequencyHz: 20, levelVrms: [0.98, 0.97] },
			{ frequencyHz: 1000, levelVrms: [1, 1] },
			{ frequencyHz: 20_000, levelVrms: [0.95, 0.96] }
		]
	};
}

/** A procedure run stored inside the case's savepoint (rolled back after). */
function procedureIn(fx: Fixtures): string {
	return String(recordProcedureRun(fx.db, fx.jobId, fx.users.tech1, matrixSweep()).id);
}

/** A job file (uploaded by tech2) stored inside the case's savepoint, as a route param. */
/** Three 200 ms tones (100 Hz, 1 kHz, 10 kHz): the shortest recorded stepped sweep. */
function matrixSweepWav(): Uint8Array {
	const step = 9600;
	const x = new Float32Array(3 * step);
	[100, 1000, 10_000].forEach((f, k) => {
		for (let i = 0; i < step; i++) x[k * step + i] = 0.5 * Math.sin((2 * Math.PI * f * i) / 48000);
	});
	return encodeWav([x], 48000);
}

async function fileIn(fx: Fixtures, type: 'pdf' | 'wav' | 'sweep' = 'pdf'): Promise<string> {
	const bytes =
		type === 'wav'
			? matrixWav()
			: type === 'sweep'
				? matrixSweepWav()
				: Buffer.from('%PDF-1.4\n1 0 obj\n<< >>\nendobj\ntrailer\n<< >>\n%%EOF\n');
	const { sha256, bytes: size } = await blobStoreFor(fx.db.$client.name).put(bytes);
	const row = fx.db
		.insert(table.jobFiles)
		.values({
			jobId: fx.jobId,
			sha256,
			receivedSha256: sha256,
			name: `matrix.${type}`,
			type: type === 'sweep' ? 'wav' : type,
			bytes: size,
			uploadedBy: fx.users.tech2,
			uploadedAt: new Date()
		})
		.returning({ id: table.jobFiles.id })
		.get();
	return String(row.id);
}

/** A multipart upload of one small PDF as the `file` part. */
function filesForm(): FormData {
	const form = new FormData();
	const pdf = '%PDF-1.4\n1 0 obj\n<< >>\nendobj\ntrailer\n<< >>\n%%EOF\n';
	form.set('file', new Blob([pdf], { type: 'application/pdf' }), 'notes.pdf');
	return form;
}

/** The seeded sign-off demo's model, as notebook route params (keys, any spelling works). */
const NOTEBOOK_MODEL = { make: 'pellowmere', model: 'sa150' };

/** The stored version of the demo model's notes (0 when none), so a save is not stale. */
function storedNotesVersion(fx: Fixtures): number {
	const row = fx.db.$client
		.prepare('SELECT version FROM model_notes WHERE model_key = ?')
		.get('pellowmere/sa150') as { version: number } | undefined;
	return row?.version ?? 0;
}

type Method = 'GET' | 'POST' | 'PUT' | 'PATCH' | 'DELETE';
const METHODS: Method[] = ['GET', 'POST', 'PUT', 'PATCH', 'DELETE'];

interface RequestSpec {
	params?: Record<string, string>;
	/** Query string including the leading `?`. */
	query?: string;
	/** JSON body (sent with Content-Type: application/json). */
	body?: unknown;
	/** Extra or replacement headers (e.g. another content type for uploads). */
	headers?: Record<string, string>;
	/** A raw body instead of JSON. */
	rawBody?: BodyInit;
}

interface Row {
	route: string;
	method: Method;
	/** Expected status for [signed-out, technician, supervisor, admin]. */
	expect: [number, number, number, number];
	/**
	 * Builds the request for one caller. It runs inside a savepoint that is rolled back after
	 * the call, so it may create what the request needs (through `fx.db`) and every caller
	 * starts from the same seeded state.
	 */
	request?: (fx: Fixtures, caller: Caller) => RequestSpec | Promise<RequestSpec>;
	/** Status for a cross-site Origin as admin (mutating methods; default 403). */
	crossOrigin?: number;
}

/* ─────────────────────────────────────────────────────────────────────────────
 * THE MATRIX. Every `+server.ts` under src/routes/api and each method it exports
 * needs exactly one row here, or this test fails. If you add or change an API route
 * (bridge-token, limit-profiles, snapshots, soak-runs …), add or update its row in
 * the same change: the statuses a signed-out visitor, a technician, a supervisor and
 * an admin get for a VALID request. Use `request` to point at seeded fixtures (see
 * `Fixtures`) or to create what the call needs through `fx.db`.
 * ───────────────────────────────────────────────────────────────────────────── */
const MATRIX: Row[] = [
	// jobs: everyone signed in reads and works jobs; approval needs supervisor/admin
	{
		route: '/api/jobs',
		method: 'GET',
		expect: [401, 200, 200, 200],
		request: () => ({ query: '?q=a&status=open&sort=-updated&page=1&pageSize=10' })
	},
	{
		route: '/api/jobs',
		method: 'POST',
		expect: [401, 201, 201, 201],
		request: () => ({
			body: {
				customerName: 'Matrix Customer',
				category: 'tuner',
				make: 'Orlund',
				model: 'OT-1',
				complaint: 'No FM'
			}
		})
	},
	{
		route: '/api/jobs/[id]',
		method: 'GET',
		expect: [401, 200, 200, 200],
		request: (fx) => ({ params: { id: String(fx.jobId) } })
	},
	{
		route: '/api/jobs/[id]',
		method: 'PATCH',
		expect: [401, 200, 200, 200],
		request: (fx) => ({
			params: { id: String(fx.jobId) },
			body: { complaint: 'Dead, and the dial lamps are out' }
		})
	},
	{
		// A job awaiting sign-off goes back to testing (anyone); approval is the sign-off's, below.
		route: '/api/jobs/[id]/status',
		method: 'POST',
		expect: [401, 200, 200, 200],
		request: (fx) => ({
			params: { id: String(fx.reviewJobId) },
			body: { status: 'testing', note: 'One more run at full power' }
		})
	},
	// bench worksheets: everyone signed in reads and fills them in
	{
		route: '/api/jobs/[id]/worksheets/[kind]',
		method: 'GET',
		expect: [401, 200, 200, 200],
		request: (fx) => ({ params: { id: String(fx.jobId), kind: 'intake' } })
	},
	{
		route: '/api/jobs/[id]/worksheets/[kind]',
		method: 'PUT',
		expect: [401, 200, 200, 200],
		request: (fx) => ({
			params: { id: String(fx.jobId), kind: 'intake' },
			body: { version: 0, data: { ...emptySheet('intake'), mainsSettingVoltsRms: 230, fuseFound: 'T2A' } }
		})
	},
	// sign-off: supervisors and admins sign with their password; everyone reads the signatures
	{
		route: '/api/jobs/[id]/sign-off',
		method: 'POST',
		expect: [401, 403, 201, 201],
		request: (fx) => ({
			params: { id: String(fx.signOffJobId) },
			body: { decision: 'approve', comment: 'Within limits', password: DEMO_PASSWORD }
		})
	},
	{
		route: '/api/jobs/[id]/sign-offs',
		method: 'GET',
		expect: [401, 200, 200, 200],
		request: (fx) => ({ params: { id: String(fx.signOffJobId) } })
	},
	// the audit trail: supervisors and admins
	{
		route: '/api/audit',
		method: 'GET',
		expect: [401, 403, 200, 200],
		request: () => ({ query: '?action=job.&pageSize=10' })
	},
	{
		route: '/api/jobs/[id]/reopen',
		method: 'POST',
		expect: [401, 403, 200, 200],
		request: (fx) => ({
			params: { id: String(fx.approvedJobId) },
			body: { reason: 'Customer reports the hum is back' }
		})
	},
	{
		route: '/api/jobs/[id]/log',
		method: 'POST',
		expect: [401, 201, 201, 201],
		request: (fx) => ({ params: { id: String(fx.jobId) }, body: { text: 'Checked the fuse', minutes: 5 } })
	},
	{
		route: '/api/jobs/[id]/parts',
		method: 'POST',
		expect: [401, 201, 201, 201],
		request: (fx) => ({
			params: { id: String(fx.jobId) },
			body: { refDes: 'F1', description: 'Fuse, slow-blow', value: 'T2A' }
		})
	},
	{
		route: '/api/jobs/[id]/parts/[partId]',
		method: 'PATCH',
		expect: [401, 200, 200, 200],
		request: (fx) => ({
			params: { id: String(fx.partJobId), partId: String(fx.partId) },
			body: { state: 'fitted' }
		})
	},
	{
		route: '/api/jobs/[id]/parts/[partId]',
		method: 'DELETE',
		expect: [401, 204, 204, 204],
		request: (fx) => ({ params: { id: String(fx.partJobId), partId: String(fx.partId) } })
	},

	// soak runs: every bench role starts, records, finishes and aborts them
	{
		route: '/api/jobs/[id]/soak-runs',
		method: 'GET',
		expect: [401, 200, 200, 200],
		request: (fx) => ({ params: { id: String(fx.jobId) } })
	},
	{
		route: '/api/jobs/[id]/soak-runs',
		method: 'POST',
		expect: [401, 201, 201, 201],
		request: (fx) => ({
			params: { id: String(fx.jobId) },
			body: { preset: 'custom', custom: { watts: 5, loadOhms: 8 } }
		})
	},
	{
		route: '/api/soak-runs/[id]',
		method: 'GET',
		expect: [401, 200, 200, 200],
		request: (fx) => ({ params: { id: soakRun(fx) } })
	},
	{
		route: '/api/soak-runs/[id]/readings',
		method: 'GET',
		expect: [401, 200, 200, 200],
		request: (fx) => ({ params: { id: soakRun(fx) }, query: '?after=0' })
	},
	{
		route: '/api/soak-runs/[id]/readings',
		method: 'POST',
		expect: [401, 200, 200, 200],
		request: (fx) => ({
			params: { id: soakRun(fx) },
			body: { readings: [{ probe: 'ambient', seq: 1, t: Date.now(), celsius: 22.5 }] }
		})
	},
	{
		route: '/api/soak-runs/[id]/events',
		method: 'POST',
		expect: [401, 200, 200, 200],
		request: (fx) => ({
			params: { id: soakRun(fx) },
			body: { events: [{ kind: 'note', at: Date.now(), detail: { text: 'fan on' } }] }
		})
	},
	{
		route: '/api/soak-runs/[id]/finish',
		method: 'POST',
		expect: [401, 200, 200, 200],
		// Started two hours ago, so its 60 minutes are over.
		request: (fx) => ({ params: { id: soakRun(fx, Date.now() - 2 * 3600_000) } })
	},
	{
		route: '/api/soak-runs/[id]/abort',
		method: 'POST',
		expect: [401, 200, 200, 200],
		request: (fx) => ({ params: { id: soakRun(fx) }, body: { reason: 'Stopped for the matrix' } })
	},

	// users: admins only
	{ route: '/api/users', method: 'GET', expect: [401, 403, 403, 200] },
	{
		route: '/api/users',
		method: 'POST',
		expect: [401, 403, 403, 201],
		request: () => ({
			body: {
				email: 'new.tech@example.com',
				name: 'New Tech',
				role: 'technician',
				password: 'a long enough pass'
			}
		})
	},
	{
		route: '/api/users/[id]',
		method: 'PATCH',
		expect: [401, 403, 403, 200],
		request: (fx) => ({ params: { id: fx.users.tech2 }, body: { role: 'supervisor' } })
	},

	// bridge tokens: every signed-in role works the bench
	{ route: '/api/bridge-token', method: 'GET', expect: [401, 200, 200, 200] },

	// settings: everyone reads, admins change
	{ route: '/api/settings', method: 'GET', expect: [401, 200, 200, 200] },
	{
		route: '/api/settings',
		method: 'PATCH',
		expect: [401, 403, 403, 200],
		request: () => ({ body: { mainsHz: 60 } })
	},

	// limit profiles: everyone signed in reads (the bench picks one); supervisors and admins change them
	{ route: '/api/limit-profiles', method: 'GET', expect: [401, 200, 200, 200] },
	{
		route: '/api/limit-profiles',
		method: 'POST',
		expect: [401, 403, 201, 201],
		request: () => ({ body: matrixProfile('Matrix profile') })
	},
	{
		route: '/api/limit-profiles/[id]',
		method: 'GET',
		expect: [401, 200, 200, 200],
		request: (fx) => ({ params: { id: profileIn(fx) } })
	},
	{
		route: '/api/limit-profiles/[id]',
		method: 'PATCH',
		expect: [401, 403, 200, 200],
		request: (fx) => ({ params: { id: profileIn(fx) }, body: { description: 'Tighter after review' } })
	},
	{
		route: '/api/limit-profiles/[id]',
		method: 'DELETE',
		expect: [401, 403, 200, 200],
		request: (fx) => ({ params: { id: profileIn(fx) } })
	},

	// snapshots: everyone signed in captures and reads; the WAV is re-analysed on the server
	{
		route: '/api/jobs/[id]/snapshots',
		method: 'GET',
		expect: [401, 200, 200, 200],
		request: (fx) => ({ params: { id: String(fx.jobId) } })
	},
	{
		route: '/api/jobs/[id]/snapshots',
		method: 'POST',
		expect: [401, 201, 201, 201],
		request: (fx) => ({ params: { id: String(fx.jobId) }, rawBody: snapshotForm() })
	},
	{
		route: '/api/snapshots/[id]',
		method: 'GET',
		expect: [401, 200, 200, 200],
		request: (fx) => ({ params: { id: snapshotIn(fx) } })
	},
	{
		route: '/api/snapshots/[id]/audio',
		method: 'GET',
		expect: [401, 200, 200, 200],
		request: (fx) => ({ params: { id: snapshotIn(fx) } })
	},
	// the customer report as a PDF: everyone signed in reads it
	{
		route: '/api/jobs/[id]/report.pdf',
		method: 'GET',
		expect: [401, 200, 200, 200],
		request: (fx) => ({ params: { id: String(fx.jobId) } })
	},
	// bench procedures: everyone signed in records and reads; the server computes the figures
	{
		route: '/api/jobs/[id]/procedures',
		method: 'GET',
		expect: [401, 200, 200, 200],
		request: (fx) => ({ params: { id: String(fx.jobId) } })
	},
	{
		route: '/api/jobs/[id]/procedures',
		method: 'POST',
		expect: [401, 201, 201, 201],
		request: (fx) => ({ params: { id: String(fx.jobId) }, body: matrixSweep() })
	},
	{
		route: '/api/procedures/[id]',
		method: 'GET',
		expect: [401, 200, 200, 200],
		request: (fx) => ({ params: { id: procedureIn(fx) } })
	},
	// compare: everyone signed in compares a job's own snapshots
	{
		route: '/api/jobs/[id]/compare',
		method: 'GET',
		expect: [401, 200, 200, 200],
		request: (fx) => {
			const a = snapshotIn(fx);
			const b = snapshotIn(fx);
			return { params: { id: String(fx.jobId) }, query: `?s=${a},${b}` };
		}
	},

	// job files: everyone signed in attaches and reads; the uploader or a supervisor/admin removes
	{
		route: '/api/jobs/[id]/files',
		method: 'GET',
		expect: [401, 200, 200, 200],
		request: (fx) => ({ params: { id: String(fx.jobId) } })
	},
	{
		route: '/api/jobs/[id]/files',
		method: 'POST',
		expect: [401, 201, 201, 201],
		request: (fx) => ({ params: { id: String(fx.jobId) }, rawBody: filesForm() })
	},
	{
		route: '/api/files/[id]',
		method: 'GET',
		expect: [401, 200, 200, 200],
		request: async (fx) => ({ params: { id: await fileIn(fx) } })
	},
	{
		// Uploaded by tech2: the technician caller (tech1) may not remove it.
		route: '/api/files/[id]',
		method: 'DELETE',
		expect: [401, 403, 204, 204],
		request: async (fx) => ({ params: { id: await fileIn(fx) } })
	},
	{
		// A WAV read as a recorded sweep (in the analysis pool): everyone signed in.
		route: '/api/files/[id]/response',
		method: 'POST',
		expect: [401, 200, 200, 200],
		request: async (fx) => ({ params: { id: await fileIn(fx, 'sweep') }, body: {} })
	},
	{
		route: '/api/files/[id]/snapshot',
		method: 'POST',
		expect: [401, 201, 201, 201],
		request: async (fx) => ({
			params: { id: await fileIn(fx, 'wav') },
			body: { label: 'From a file', stage: 'before' }
		})
	},
	// the model notebook: everyone signed in reads it, writes notes and attaches documents
	{
		route: '/api/models',
		method: 'GET',
		expect: [401, 200, 200, 200],
		request: () => ({ query: '?q=pellowmere' })
	},
	{
		route: '/api/models/lookup',
		method: 'GET',
		expect: [401, 200, 200, 200],
		request: () => ({ query: '?make=Pellowmere&model=SA-150' })
	},
	{
		route: '/api/models/[make]/[model]',
		method: 'GET',
		expect: [401, 200, 200, 200],
		request: () => ({ params: NOTEBOOK_MODEL })
	},
	{
		route: '/api/models/[make]/[model]/typical.csv',
		method: 'GET',
		expect: [401, 200, 200, 200],
		request: () => ({ params: NOTEBOOK_MODEL })
	},
	{
		route: '/api/models/[make]/[model]/notes',
		method: 'PUT',
		expect: [401, 200, 200, 200],
		request: (fx) => ({
			params: NOTEBOOK_MODEL,
			body: { version: storedNotesVersion(fx), text: 'Idle current 22 mA per side (matrix)' }
		})
	},
	{
		route: '/api/models/[make]/[model]/files',
		method: 'POST',
		expect: [401, 201, 201, 201],
		request: () => ({ params: NOTEBOOK_MODEL, rawBody: filesForm() })
	},
	// exports: everyone signed in
	{
		route: '/api/jobs/[id]/snapshots.csv',
		method: 'GET',
		expect: [401, 200, 200, 200],
		request: (fx) => ({ params: { id: String(fx.signOffJobId) } })
	},
	{
		route: '/api/jobs/[id]/snapshots.json',
		method: 'GET',
		expect: [401, 200, 200, 200],
		request: (fx) => ({ params: { id: String(fx.signOffJobId) } })
	},

	// estimates and money: everyone signed in drafts and records counter payments; supervisors
	// send estimates and issue invoices; the payment service's webhook is signed out (its
	// signature is the key, so an unsigned call is a 400 for everyone)
	{
		route: '/api/jobs/[id]/estimates',
		method: 'GET',
		expect: [401, 200, 200, 200],
		request: (fx) => ({ params: { id: String(fx.jobId) } })
	},
	{
		route: '/api/jobs/[id]/estimates',
		method: 'POST',
		expect: [401, 201, 201, 201],
		request: (fx) => ({
			params: { id: String(fx.jobId) },
			body: { lines: [{ kind: 'labour', description: 'Bench labour', durationMinutes: 60 }] }
		})
	},
	{
		// No such estimate: the role guard answers first (403), then the service (404).
		route: '/api/estimates/[id]/send',
		method: 'POST',
		expect: [401, 403, 404, 404],
		request: () => ({ params: { id: '999999' }, body: {} })
	},
	{
		route: '/api/jobs/[id]/payments',
		method: 'GET',
		expect: [401, 200, 200, 200],
		request: (fx) => ({ params: { id: String(fx.jobId) } })
	},
	{
		route: '/api/jobs/[id]/payments',
		method: 'POST',
		expect: [401, 201, 201, 201],
		request: (fx) => ({
			params: { id: String(fx.jobId) },
			body: { kind: 'payment', method: 'cash', amountMinor: 500, reference: 'matrix' }
		})
	},
	{
		// The signed-off fixture job has no approved estimate: supervisors get the 409 that says so.
		route: '/api/jobs/[id]/invoice',
		method: 'POST',
		expect: [401, 403, 409, 409],
		request: (fx) => ({ params: { id: String(fx.approvedJobId) }, body: {} })
	},
	{
		route: '/api/jobs/[id]/invoice.pdf',
		method: 'GET',
		expect: [401, 404, 404, 404],
		request: (fx) => ({ params: { id: String(fx.approvedJobId) } })
	},
	{
		route: '/api/payments/webhook',
		method: 'POST',
		expect: [400, 400, 400, 400],
		// Server to server: no Origin to check; the signature is the only key (unsigned → 400).
		crossOrigin: 400,
		request: () => ({ body: { id: 'evt_unsigned', type: 'checkout.session.completed' } })
	},

	// own account
	{
		route: '/api/auth/password',
		method: 'POST',
		expect: [401, 200, 200, 200],
		request: () => ({ body: { currentPassword: DEMO_PASSWORD, newPassword: 'another long passphrase' } })
	}
];

// ── discovery ───────────────────────────────────────────────────────────────

type Handler = (event: RequestEvent) => Response | Promise<Response>;
interface RouteModule {
	file: string;
	routeId: string;
	handlers: Partial<Record<Method, Handler>>;
}

const discovered: RouteModule[] = [];

/** Loads that call no service (they only redirect or hand over locals): nothing to wrap. */
const LOADS_WITHOUT_SERVICES = ['+layout.server.ts', '+page.server.ts'];

// ── calling a handler like SvelteKit does ──────────────────────────────────

const ORIGIN = 'http://127.0.0.1:5173';

interface CallOptions {
	origin?: string | null;
	contentType?: string;
}

async function callHandler(
	mod: RouteModule,
	method: Method,
	who: Who,
	spec: RequestSpec,
	options: CallOptions = {}
): Promise<{ status: number; body: unknown }> {
	const params = spec.params ?? {};
	const url = new URL(fillRoute(mod.routeId, params) + (spec.query ?? ''), ORIGIN);
	const headers = new Headers({ accept: 'application/json' });
	const origin = options.origin === undefined ? ORIGIN : options.origin;
	if (origin) headers.set('origin', origin);
	let body: BodyInit | undefined;
	if (spec.rawBody !== undefined) body = spec.rawBody;
	else if (spec.body !== undefined) {
		body = JSON.stringify(spec.body);
		headers.set('content-type', options.contentType ?? 'application/json');
	}
	for (const [k, v] of Object.entries(spec.headers ?? {})) headers.set(k, v);
	const request = new Request(url, { method, headers, body });

	const event = {
		request,
		url,
		params,
		route: { id: mod.routeId },
		locals: { user: who.user, session: who.session },
		cookies: fakeCookies(),
		fetch: (...args: Parameters<typeof fetch>) => fetch(...args),
		getClientAddress: () => '127.0.0.1',
		platform: undefined,
		setHeaders: () => {},
		isDataRequest: false,
		isSubRequest: false,
		isRemoteRequest: false
	} as unknown as RequestEvent;

	try {
		const res = await mod.handlers[method]!(event);
		const text = await res.text();
		let parsed: unknown = text;
		try {
			parsed = text ? JSON.parse(text) : null;
		} catch {
			// Not JSON (a download): keep the text.
		}
		return { status: res.status, body: parsed };
	} catch (e) {
		if (isHttpError(e)) return { status: e.status, body: e.body };
		if (isRedirect(e)) return { status: e.status, body: e.location };
		throw e;
	}
}

// ── fixtures, and a savepoint around every call ─────────────────────────────

let fx: Fixtures;
let callers: Record<Caller, Who>;

beforeAll(async () => {
	for (const file of findServerFiles(join(ROUTES_DIR, 'api'))) {
		const mod = (await import(/* @vite-ignore */ pathToFileURL(file).href)) as Record<string, unknown>;
		const handlers: Partial<Record<Method, Handler>> = {};
		for (const m of METHODS) if (typeof mod[m] === 'function') handlers[m] = mod[m] as Handler;
		discovered.push({ file, routeId: routeIdOf(file), handlers });
	}
	({ fx, callers } = await setupFixtures());
});

useSavepoints();

function moduleFor(row: Row): RouteModule {
	const mod = discovered.find((d) => d.routeId === row.route);
	if (!mod) throw new Error(`No route file for ${row.route}: remove or fix the row`);
	if (!mod.handlers[row.method])
		throw new Error(`${row.route} does not export ${row.method}: remove or fix the row`);
	return mod;
}

// ── the checks ──────────────────────────────────────────────────────────────

describe('authorization matrix', () => {
	it('has exactly one row for every route file and method on disk', () => {
		expect(discovered.length).toBeGreaterThan(0);
		const onDisk = discovered.flatMap((d) => Object.keys(d.handlers).map((m) => `${m} ${d.routeId}`)).sort();
		const inTable = MATRIX.map((r) => `${r.method} ${r.route}`).sort();
		const missing = onDisk.filter((k) => !inTable.includes(k));
		const stale = inTable.filter((k) => !onDisk.includes(k));
		const duplicated = inTable.filter((k, i) => inTable.indexOf(k) !== i);
		expect({ missing, stale, duplicated }).toEqual({ missing: [], stale: [], duplicated: [] });
	});

	it('wraps every API handler, page load and form action, so a service refusal is never a 500', async () => {
		const bare: string[] = [];
		for (const d of discovered)
			for (const [m, h] of Object.entries(d.handlers)) if (!isWrapped(h)) bare.push(`${m} ${d.routeId}`);
		for (const file of findServerFiles(ROUTES_DIR, ['+page.server.ts', '+layout.server.ts'])) {
			const mod = (await import(/* @vite-ignore */ pathToFileURL(file).href)) as {
				load?: unknown;
				actions?: Record<string, unknown>;
			};
			const where = relative(ROUTES_DIR, file);
			// A load that only redirects or hands over locals calls no service: it may stay bare.
			if (mod.load && !isWrapped(mod.load) && !LOADS_WITHOUT_SERVICES.includes(where))
				bare.push(`load ${where}`);
			for (const [name, action] of Object.entries(mod.actions ?? {}))
				if (!isWrapped(action)) bare.push(`action ${name} ${where}`);
		}
		expect(bare).toEqual([]);
	});

	for (const row of MATRIX) {
		for (const [i, caller] of ROLES.entries()) {
			it(`${row.method} ${row.route} as ${caller} → ${row.expect[i]}`, async () => {
				const spec = row.request ? await row.request(fx, caller) : {};
				const res = await callHandler(moduleFor(row), row.method, callers[caller], spec);
				expect(res.status, JSON.stringify(res.body)).toBe(row.expect[i]);
				if (res.status >= 400) expect(res.body).toMatchObject({ message: expect.any(String) });
			});
		}
	}
});

describe('mutating API requests refuse cross-site callers', () => {
	for (const row of MATRIX.filter((r) => r.method !== 'GET')) {
		const expected = row.crossOrigin ?? 403;
		it(`${row.method} ${row.route} with a foreign Origin → ${expected}`, async () => {
			const spec = row.request ? await row.request(fx, 'admin') : {};
			const foreign = await callHandler(moduleFor(row), row.method, callers.admin, spec, {
				origin: 'https://evil.example'
			});
			expect(foreign.status).toBe(expected);
			const none = await callHandler(moduleFor(row), row.method, callers.admin, spec, { origin: null });
			expect(none.status).toBe(expected);
		});
	}
});

describe('jobs and accounts API input handling', () => {
	const jobRoute = () => discovered.find((d) => d.routeId === '/api/jobs')!;
	const admin = () => callers.admin;
	const intake = {
		customerName: 'Input Test',
		category: 'receiver',
		make: 'Corvane',
		model: 'CR-1',
		complaint: 'Hum'
	};

	it('415 for a body that is not JSON', async () => {
		const res = await callHandler(
			jobRoute(),
			'POST',
			admin(),
			{ body: intake },
			{ contentType: 'text/plain' }
		);
		expect(res.status).toBe(415);
	});

	it('413 for a body over the limit', async () => {
		const res = await callHandler(jobRoute(), 'POST', admin(), {
			body: { ...intake, complaint: 'x'.repeat(70 * 1024) }
		});
		expect(res.status).toBe(413);
	});

	it('400 with the zod issues for an invalid body, and for malformed JSON', async () => {
		const res = await callHandler(jobRoute(), 'POST', admin(), {
			body: { ...intake, make: '', year: 'old' }
		});
		expect(res.status).toBe(400);
		const issues = (res.body as { issues: { path: string }[] }).issues.map((i) => i.path).sort();
		expect(issues).toEqual(['make', 'year']);
		const broken = await callHandler(jobRoute(), 'POST', admin(), {
			rawBody: '{"make": ',
			headers: { 'content-type': 'application/json' }
		});
		expect(broken.status).toBe(400);
	});

	it('400 for a bad query string (pageSize over 100, unknown sort)', async () => {
		expect((await callHandler(jobRoute(), 'GET', admin(), { query: '?pageSize=500' })).status).toBe(400);
		expect((await callHandler(jobRoute(), 'GET', admin(), { query: '?sort=price' })).status).toBe(400);
	});

	it('answers { items, total, page, pageSize } and resolves technician=me', async () => {
		const res = await callHandler(jobRoute(), 'GET', callers.technician, {
			query: '?technician=me&pageSize=100'
		});
		expect(res.status).toBe(200);
		const body = res.body as {
			items: { technicianId: string }[];
			total: number;
			page: number;
			pageSize: number;
		};
		expect(body.page).toBe(1);
		expect(body.pageSize).toBe(100);
		expect(body.total).toBe(body.items.length);
		expect(body.total).toBeGreaterThan(0);
		expect(new Set(body.items.map((i) => i.technicianId))).toEqual(new Set([fx.users.tech1]));
	});

	it('404 for unknown or malformed ids', async () => {
		const one = discovered.find((d) => d.routeId === '/api/jobs/[id]')!;
		expect((await callHandler(one, 'GET', admin(), { params: { id: '999999' } })).status).toBe(404);
		expect((await callHandler(one, 'GET', admin(), { params: { id: 'abc' } })).status).toBe(404);
		expect((await callHandler(one, 'GET', admin(), { params: { id: '-1' } })).status).toBe(404);
		const user = discovered.find((d) => d.routeId === '/api/users/[id]')!;
		expect(
			(await callHandler(user, 'PATCH', admin(), { params: { id: 'nosuchuser' }, body: { name: 'X' } }))
				.status
		).toBe(404);
		expect(
			(await callHandler(user, 'PATCH', admin(), { params: { id: '../x' }, body: { name: 'X' } })).status
		).toBe(404);
	});

	it('409 for a status move the path does not allow, and for approval (a sign-off approves)', async () => {
		const status = discovered.find((d) => d.routeId === '/api/jobs/[id]/status')!;
		const skip = await callHandler(status, 'POST', admin(), {
			params: { id: String(fx.jobId) },
			body: { status: 'testing' }
		});
		expect(skip.status).toBe(409);
		const approve = await callHandler(status, 'POST', callers.supervisor, {
			params: { id: String(fx.reviewJobId) },
			body: { status: 'approved' }
		});
		expect(approve.status).toBe(409);
		expect((approve.body as { message: string }).message).toMatch(/Review and sign off/);
	});

	it('409 for every edit of a signed-off job, saying how to reopen it; a reopened job takes edits again', async () => {
		const route = (id: string) => discovered.find((d) => d.routeId === id)!;
		const params = { id: String(fx.approvedJobId) };
		const locked = { message: 'This job is signed off and locked; a supervisor can reopen it with a reason' };
		const calls: [string, Method, unknown][] = [
			['/api/jobs/[id]', 'PATCH', { complaint: 'Edited after sign-off' }],
			['/api/jobs/[id]/log', 'POST', { text: 'Late entry', minutes: 5 }],
			['/api/jobs/[id]/parts', 'POST', { refDes: 'R9', description: 'Resistor' }],
			['/api/jobs/[id]/status', 'POST', { status: 'on-hold' }]
		];
		for (const [id, method, body] of calls) {
			const res = await callHandler(route(id), method, callers.technician, { params, body });
			expect({ id, status: res.status, body: res.body }).toEqual({ id, status: 409, body: locked });
		}
		const reopen = route('/api/jobs/[id]/reopen');
		const noReason = await callHandler(reopen, 'POST', callers.supervisor, {
			params,
			body: { reason: 'ok' }
		});
		expect(noReason.status).toBe(400);
		expect(noReason.body).toMatchObject({ issues: [{ path: 'reason' }] });
		const ok = await callHandler(reopen, 'POST', callers.supervisor, {
			params,
			body: { reason: 'Recheck the right channel' }
		});
		expect(ok.body).toMatchObject({ status: 'awaiting-review' });
		const again = await callHandler(reopen, 'POST', callers.supervisor, {
			params,
			body: { reason: 'Recheck the right channel' }
		});
		expect(again.status).toBe(409);
		const log = await callHandler(route('/api/jobs/[id]/log'), 'POST', callers.technician, {
			params,
			body: { text: 'Rechecked', minutes: 5 }
		});
		expect(log.status).toBe(201);
	});

	it('a wrong current password is a 400 naming the field', async () => {
		const pw = discovered.find((d) => d.routeId === '/api/auth/password')!;
		const res = await callHandler(pw, 'POST', callers.technician, {
			body: { currentPassword: 'not it', newPassword: 'another long passphrase' }
		});
		expect(res.status).toBe(400);
		expect(res.body).toMatchObject({ issues: [{ path: 'currentPassword' }] });
	});

	it('an admin cannot deactivate their own account (409)', async () => {
		const user = discovered.find((d) => d.routeId === '/api/users/[id]')!;
		const res = await callHandler(user, 'PATCH', admin(), {
			params: { id: fx.users.admin },
			body: { active: false }
		});
		expect(res.status).toBe(409);
	});
});
