// The customer report and its private links on an in-memory database: what the customer may see
// (internal notes never), links that expire and can be revoked (only a SHA-256 is stored), and
// the PDF read back with pdftotext/pdfinfo (poppler, independent of the code that wrote it).
import { beforeEach, describe, expect, it } from 'vitest';
import { execFileSync } from 'node:child_process';
import { mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { createHash } from 'node:crypto';
import { openDb, type Db } from './db/open';
import * as table from './db/schema';
import { addLogEntry, addPart } from './jobs';
import { createSnapshot } from './snapshots';
import { buildReport } from './report';
import { renderReportPdf } from './report-pdf';
import { MAX_QUEUED_PDFS, renderPdf } from './pdf-renderer';
import {
	createCustomerLink,
	listCustomerLinks,
	recordLinkView,
	resolveCustomerLink,
	revokeCustomerLink
} from './customer-links';
import { encodeWav } from '$lib/dsp/wav';
import { eq } from 'drizzle-orm';
import { hashPassword } from './auth';
import { updateSettings, getSettings } from './settings';
import { signOffJob } from './sign-off';

let db: Db;
let jobId: number;
const T0 = 1_800_000_000_000;

/** A 1 kHz sine at `a` of full scale with a third harmonic at `h3` of it, 1.5 s at 48 kHz. */
function tone(a: number, h3: number): Uint8Array {
	const n = 72_000;
	const x = new Float32Array(n);
	for (let i = 0; i < n; i++) {
		const w = (2 * Math.PI * 1000 * i) / 48_000;
		x[i] = a * (Math.sin(w) + h3 * Math.sin(3 * w));
	}
	return encodeWav([x, x], 48_000);
}

beforeEach(() => {
	db = openDb(':memory:');
	db.insert(table.users)
		.values({ id: 'u1', email: 't@example.com', name: 'Tess Bench', role: 'technician', passwordHash: 'x' })
		.run();
	const c = db.insert(table.customers).values({ name: 'Rowan Customer' }).returning().get();
	jobId = db
		.insert(table.jobs)
		.values({
			customerId: c.id,
			category: 'receiver',
			make: 'Corvane',
			model: 'CR-7400',
			complaint: 'Crackles on the left',
			ratedPowerW: 40,
			ratedLoadOhms: 8
		})
		.returning()
		.get().id;
	addLogEntry(
		db,
		jobId,
		{
			text: 'Cleaned the selector switch and replaced two coupling capacitors.',
			minutes: 30,
			forCustomer: true
		},
		'u1'
	);
	addLogEntry(db, jobId, { text: 'INTERNAL: customer haggled, charge the full bench fee', minutes: 0 }, 'u1');
	addPart(
		db,
		jobId,
		{
			refDes: 'C12',
			description: 'Coupling capacitor',
			value: '2.2 µF 50 V',
			quantity: 2,
			unitCostCents: 90,
			state: 'fitted'
		},
		'u1'
	);
	addPart(
		db,
		jobId,
		{ refDes: 'Q7', description: 'Driver transistor', quantity: 1, unitCostCents: 120, state: 'ordered' },
		'u1'
	);
	createSnapshot(db, {
		jobId,
		userId: 'u1',
		wav: tone(0.5, 0.01),
		meta: { label: 'As received', stage: 'before', loadOhms: 8 }
	});
	createSnapshot(db, {
		jobId,
		userId: 'u1',
		wav: tone(0.5, 0.0001),
		meta: { label: 'After service', stage: 'after', loadOhms: 8 }
	});
});

describe('the report model', () => {
	it('shows the customer’s notes, fitted parts and before/after figures, never internal notes', () => {
		const m = buildReport(db, jobId, T0);
		expect(m.work.map((w) => w.text)).toEqual([
			'Cleaned the selector switch and replaced two coupling capacitors.'
		]);
		expect(JSON.stringify(m)).not.toContain('INTERNAL');
		expect(m.parts.map((p) => p.refDes)).toEqual(['C12']); // the ordered one is not fitted
		const thdn = m.figures.find((f) => f.id === 'ch0:thdnPercent')!;
		expect(thdn.plain).toMatch(/not the test tone/);
		// THD of a sine with a 1 % third harmonic is 1 % (IEEE 1241 THD = √ΣVn²/V1).
		const thd = m.figures.find((f) => f.id === 'ch0:thdPercent')!;
		expect(thd.before).toMatch(/^1\.00?\d* %$/);
		// P = V²/R: 0.5 full scale of 1 V peak is 0.3536 V rms, 15.6 mW into 8 Ω.
		expect(m.figures.find((f) => f.id === 'ch0:powerW')!.after).toMatch(/15\.6\d* mW/);
		expect(m.spectra.map((s) => s.label)).toEqual(['Before (left)', 'After (left)']);
		expect(m.spectra[0].frequencyHz.length).toBeLessThanOrEqual(320);
		expect(m.signOff).toBeNull();
	});

	it('renders a PDF whose figures are real text, with its metadata (drawn on the PDF worker)', async () => {
		const m = buildReport(db, jobId, T0);
		// The way the app draws it: on the PDF worker thread, the fonts handed over in workerData.
		const pdf = await renderPdf({ kind: 'report', model: m });
		// Byte for byte what the same code draws on this thread (bundling changed nothing).
		expect(pdf.equals(await renderReportPdf(m))).toBe(true);
		expect(pdf.subarray(0, 5).toString()).toBe('%PDF-');
		const dir = mkdtempSync(join(tmpdir(), 'report-'));
		const file = join(dir, 'r.pdf');
		writeFileSync(file, pdf);
		const text = execFileSync('pdftotext', ['-layout', file, '-'], { encoding: 'utf8' });
		expect(text).toContain('Service report for Rowan Customer');
		expect(text).toContain('Crackles on the left');
		expect(text).toContain('C12');
		expect(text).toContain('Not yet signed off.');
		expect(text).toContain(m.figures.find((f) => f.id === 'ch0:thdnPercent')!.before!);
		expect(text).not.toContain('INTERNAL');
		const info = execFileSync('pdfinfo', [file], { encoding: 'utf8' });
		expect(info).toMatch(/Title:\s+Service report — Corvane CR-7400 \(job \d+\)/);
		expect(info).toMatch(/Author:\s+\S/);
		expect(info).toMatch(/Page size:\s+595(\.\d+)? x 841(\.\d+)? pts \(A4\)/); // A4 in points (ISO 216: 210 × 297 mm = 595.28 × 841.89 pt)
	});
});

describe('a signed-off report', () => {
	it('names the signer and the meaning, on the page model and in the PDF', async () => {
		// This test is about the report, not the shop's requirements: only the signature is needed.
		const settings = getSettings(db);
		updateSettings(db, {
			signOff: {
				...settings.signOff,
				requireAfterSnapshotPass: false,
				requirePassedSoak: false,
				requirePassedSafetyCheck: false
			}
		});
		db.insert(table.users)
			.values({
				id: 'sup',
				email: 'sup@example.com',
				name: 'Rowan Thistlewood',
				role: 'supervisor',
				passwordHash: await hashPassword('a long enough password 1')
			})
			.run();
		db.update(table.jobs).set({ status: 'awaiting-review' }).where(eq(table.jobs.id, jobId)).run();
		await signOffJob(
			db,
			jobId,
			{ decision: 'approve', comment: 'Within limits', password: 'a long enough password 1' },
			{ id: 'sup', role: 'supervisor' },
			'10.0.0.9'
		);
		const m = buildReport(db, jobId);
		expect(m.signOff).toMatchObject({
			name: 'Rowan Thistlewood',
			meaning: 'approved for return to the customer'
		});
		const dir = mkdtempSync(join(tmpdir(), 'report-'));
		writeFileSync(join(dir, 's.pdf'), await renderReportPdf(m));
		const text = execFileSync('pdftotext', [join(dir, 's.pdf'), '-'], { encoding: 'utf8' });
		expect(text).toContain('Rowan Thistlewood');
		expect(text).toContain('approved for return to the customer');
		expect(text).toContain(m.figures.find((f) => f.id === 'ch0:thdnPercent')!.after!);
	});
});

describe('customer links', () => {
	it('store only the token’s SHA-256, open until they expire or are revoked', () => {
		const { id, token } = createCustomerLink(
			db,
			{ jobId, purpose: 'report', createdBy: 'u1', lifetimeDays: 2 },
			T0
		);
		const row = db.select().from(table.customerLinks).get()!;
		// FIPS 180-4 SHA-256 of the token, hex: the token itself is nowhere in the database.
		expect(row.tokenSha256).toBe(createHash('sha256').update(token).digest('hex'));
		expect(JSON.stringify(db.select().from(table.auditLog).all())).not.toContain(token);
		expect(resolveCustomerLink(db, token, 'report', T0 + 1000)).toEqual({ id, jobId });
		expect(resolveCustomerLink(db, token, 'estimate', T0)).toBeNull(); // another purpose
		expect(
			resolveCustomerLink(db, token.slice(0, -1) + (token.endsWith('A') ? 'B' : 'A'), 'report', T0)
		).toBeNull();
		expect(resolveCustomerLink(db, 'short', 'report', T0)).toBeNull();
		expect(resolveCustomerLink(db, token, 'report', T0 + 2 * 86_400_000)).toBeNull(); // expired
		recordLinkView(db, id, T0 + 5000);
		expect(listCustomerLinks(db, jobId, T0 + 6000)[0]).toMatchObject({ views: 1, live: true });
		revokeCustomerLink(db, jobId, id, 'u1', T0 + 7000);
		expect(resolveCustomerLink(db, token, 'report', T0 + 8000)).toBeNull();
		expect(listCustomerLinks(db, jobId, T0 + 8000)[0].live).toBe(false);
		const actions = db
			.select()
			.from(table.auditLog)
			.all()
			.map((a) => a.action);
		expect(actions).toEqual(expect.arrayContaining(['customer-link.created', 'customer-link.revoked']));
		expect(() => revokeCustomerLink(db, jobId + 1, id, 'u1')).toThrow(/No such link/);
	});
});

describe('the PDF worker', () => {
	it('answers 503 with Retry-After once the queue is full, and still draws what it accepted', async () => {
		const m = buildReport(db, jobId, T0);
		const accepted = Array.from({ length: MAX_QUEUED_PDFS + 1 }, () =>
			renderPdf({ kind: 'report', model: m })
		);
		const refused = await renderPdf({ kind: 'report', model: m }).then(
			() => null,
			(e: unknown) => e
		);
		expect(refused).toMatchObject({ code: 'busy', headers: { 'retry-after': '5' } });
		for (const pdf of await Promise.all(accepted)) expect(pdf.subarray(0, 5).toString()).toBe('%PDF-');
	});
});
