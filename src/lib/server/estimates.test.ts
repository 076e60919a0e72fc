// The money story on an in-memory database, with the real SDK client talking to the local fake
// payment service and the fake's webhook deliveries verified by the SDK's own helper: draft,
// send (frozen, fingerprinted), the customer's decision from the link, the deposit checkout,
// replayed and forged events, counter payments and refunds, and the invoice.
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import http from 'node:http';
import { execFileSync } from 'node:child_process';
import { mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import Stripe from 'stripe';
import { eq } from 'drizzle-orm';
import { openDb, type Db } from './db/open';
import * as table from './db/schema';
import { addPart } from './jobs';
import { getSettings, updateSettings } from './settings';
import { sendReportToCustomer } from './report-send';
import { createCustomerLink, revokeCustomerLink } from './customer-links';
import {
	customerEstimatePage,
	decideEstimate,
	listEstimates,
	saveEstimateDraft,
	sendEstimate
} from './estimates';
import { handlePaymentWebhook, moneySummary, recordCounterPayment, startCheckout } from './payments';
import { issueInvoice, renderInvoicePdf } from './invoices';
import { signWebhookPayload } from './payment-signature';
import { DomainError } from './errors';
import type { OutgoingMail } from './mail';
import { startPaymentsFake, type PaymentsFake } from '../../../scripts/payments-fake';

const SECRET = 'whsec_unit_test_secret_0123456789';
const API_KEY = 'sk_test_unit';
const T0 = Date.UTC(2026, 11, 4, 9, 0, 0);
const tech = { id: 'u-tech', role: 'technician' as const };
const sup = { id: 'u-sup', role: 'supervisor' as const };

let db: Db;
let jobId: number;
let partId: number;
let mails: OutgoingMail[];
const send = async (m: OutgoingMail) => {
	mails.push(m);
	return { messageId: `<m${mails.length}@test>` };
};

beforeEach(() => {
	db = openDb(':memory:');
	mails = [];
	db.insert(table.users)
		.values([
			{ id: tech.id, email: 'tech@example.com', name: 'Tess Bench', role: 'technician', passwordHash: 'x' },
			{ id: sup.id, email: 'sup@example.com', name: 'Sam Review', role: 'supervisor', passwordHash: 'x' }
		])
		.run();
	const c = db
		.insert(table.customers)
		.values({ name: 'Rowan Customer', email: 'rowan@example.net' })
		.returning()
		.get();
	jobId = db
		.insert(table.jobs)
		.values({
			customerId: c.id,
			category: 'receiver',
			make: 'Corvane',
			model: 'CR-7400',
			complaint: 'Hum',
			status: 'diagnosing'
		})
		.returning()
		.get().id;
	partId = addPart(
		db,
		jobId,
		{ refDes: 'C801', description: 'Filter capacitor', quantity: 2, unitCostCents: 1250, state: 'ordered' },
		tech.id
	).id;
	// 20 % tax on top, 30 % parts markup, 60.00 an hour, 25 % deposit (the defaults, stated here).
	updateSettings(db, {
		money: {
			currency: 'EUR',
			taxRateBasisPoints: 2000,
			pricesIncludeTax: false,
			partsMarkupBasisPoints: 3000,
			labourRatePerHourMinor: 6000,
			deposit: { kind: 'percent', basisPoints: 2500 }
		},
		customerReport: {
			address: '',
			phone: '',
			email: 'shop@example.com',
			warrantyNote: '',
			safetyNote: '',
			footer: '',
			linkLifetimeDays: 30,
			allowDraftSend: false
		}
	});
});

const LINES = () => [
	{ kind: 'labour' as const, description: 'Recap the supply', durationMinutes: 90 },
	{ kind: 'part' as const, description: 'C801 filter caps', partId, quantity: 2, unitCostMinor: 1250 },
	{ kind: 'fee' as const, description: 'Diagnosis fee', amountMinor: 2000 }
];

/** Draft and send; the customer's token from the e-mail. */
async function sent(): Promise<string> {
	const d = saveEstimateDraft(db, jobId, { lines: LINES(), note: 'Parts in stock' }, tech, T0);
	await sendEstimate(db, d.id, sup, { origin: 'http://shop.test', send, nowMs: T0 });
	const url = /http:\/\/shop\.test\/e\/([A-Za-z0-9_-]{43})/.exec(mails.at(-1)!.text)![1];
	return url;
}

describe('estimate totals (worked example written here)', () => {
	it('prices labour, marked-up parts and a fee, adds tax once and asks a quarter as deposit', () => {
		const d = saveEstimateDraft(db, jobId, { lines: LINES() }, tech, T0);
		// 1.5 h × 60.00 = 90.00; 2 × 12.50 × 1.30 = 32.50; fee 20.00 → net 142.50; tax 20 % = 28.50; gross 171.00
		expect(d.document.lines.map((l) => l.amountMinor)).toEqual([9000, 3250, 2000]);
		expect(d.document.totals).toEqual({ netMinor: 14250, taxMinor: 2850, grossMinor: 17100 });
		expect(d.document.depositMinor).toBe(4275); // 25 % of 171.00
	});

	it('refuses a part that is not on this job, naming the line', () => {
		expect(() =>
			saveEstimateDraft(
				db,
				jobId,
				{ lines: [{ kind: 'part', description: 'x', partId: 9999, quantity: 1, unitCostMinor: 1 }] },
				tech
			)
		).toThrow(/Part #9999 is not on this job/);
	});
});

describe('sending and the customer decision', () => {
	it('freezes the sent version, mails a private link and waits for the customer', async () => {
		const token = await sent();
		expect(mails[0].to).toBe('rowan@example.net');
		const [v1] = listEstimates(db, jobId);
		expect(v1.status).toBe('sent');
		expect(v1.sha256).toMatch(/^[0-9a-f]{64}$/);
		const job = db.select().from(table.jobs).where(eq(table.jobs.id, jobId)).get()!;
		expect(job.status).toBe('awaiting-approval');
		// The database itself refuses to change what was sent.
		expect(() =>
			db.update(table.estimates).set({ lines: [] }).where(eq(table.estimates.id, v1.id)).run()
		).toThrow(/cannot be changed/);
		// Settings changed after sending do not change what the customer sees.
		updateSettings(db, {
			money: {
				...v1.document,
				partsMarkupBasisPoints: 0,
				labourRatePerHourMinor: 1,
				deposit: { kind: 'none' }
			} as never
		});
		expect(customerEstimatePage(db, token, T0)!.estimate!.document.totals.grossMinor).toBe(17100);
	});

	it('technicians draft but do not send', async () => {
		const d = saveEstimateDraft(db, jobId, { lines: LINES() }, tech, T0);
		await expect(sendEstimate(db, d.id, tech, { origin: 'http://shop.test', send })).rejects.toThrow(
			/supervisor/
		);
		expect(mails).toHaveLength(0);
	});

	it('refuses an answer whose fingerprint is not the estimate on record, then records the approval', async () => {
		const token = await sent();
		const page = customerEstimatePage(db, token, T0)!;
		await expect(
			decideEstimate(
				db,
				token,
				{ decision: 'approve', typedName: 'Rowan C', consent: true, seenSha256: 'a'.repeat(64) },
				{ send, nowMs: T0 }
			)
		).rejects.toThrow(/changed since this page was opened/);
		await expect(
			decideEstimate(
				db,
				token,
				{ decision: 'approve', typedName: 'Rowan C', seenSha256: page.estimate!.sha256 } as never,
				{ send, nowMs: T0 }
			)
		).rejects.toThrow(/Tick the box/);
		const done = await decideEstimate(
			db,
			token,
			{ decision: 'approve', typedName: 'Rowan C', consent: true, seenSha256: page.estimate!.sha256 },
			{ send, nowMs: T0 + 1000 }
		);
		expect(done.decision).toBe('approve');
		const job = db.select().from(table.jobs).where(eq(table.jobs.id, jobId)).get()!;
		expect(job.status).toBe('repairing');
		const [v1] = listEstimates(db, jobId);
		expect(v1.status).toBe('approved');
		expect(v1.decision).toMatchObject({ typedName: 'Rowan C', seenSha256: page.estimate!.sha256 });
		// The shop is told.
		expect(mails.at(-1)!.to).toBe('shop@example.com');
		expect(mails.at(-1)!.subject).toMatch(/approved by Rowan Customer/);
		// A second answer is refused.
		await expect(
			decideEstimate(
				db,
				token,
				{ decision: 'decline', reason: 'changed my mind', seenSha256: page.estimate!.sha256 },
				{ send }
			)
		).rejects.toThrow(/already approved/);
	});

	it('a decline moves the job to declined with the reason', async () => {
		const token = await sent();
		const sha = customerEstimatePage(db, token, T0)!.estimate!.sha256;
		await decideEstimate(
			db,
			token,
			{ decision: 'decline', reason: 'Too dear for now', seenSha256: sha },
			{ send, nowMs: T0 }
		);
		expect(db.select().from(table.jobs).where(eq(table.jobs.id, jobId)).get()!.status).toBe('declined');
		expect(listEstimates(db, jobId)[0].decision?.reason).toBe('Too dear for now');
	});

	it('an expired or revoked link opens nothing', async () => {
		const token = await sent();
		expect(customerEstimatePage(db, token, T0 + 31 * 86_400_000)).toBeNull();
		const link = createCustomerLink(
			db,
			{ jobId, purpose: 'estimate', createdBy: sup.id, lifetimeDays: 5 },
			T0
		);
		revokeCustomerLink(db, jobId, link.id, sup.id, T0);
		expect(customerEstimatePage(db, link.token, T0)).toBeNull();
		// A report link is not an estimate link.
		const report = createCustomerLink(
			db,
			{ jobId, purpose: 'report', createdBy: sup.id, lifetimeDays: 5 },
			T0
		);
		expect(customerEstimatePage(db, report.token, T0)).toBeNull();
	});

	it('a revision supersedes the unanswered version', async () => {
		await sent();
		saveEstimateDraft(db, jobId, { lines: LINES().slice(0, 1) }, tech, T0);
		const draft = listEstimates(db, jobId).find((e) => e.status === 'draft')!;
		await sendEstimate(db, draft.id, sup, { origin: 'http://shop.test', send, nowMs: T0 });
		expect(listEstimates(db, jobId).map((e) => [e.version, e.status])).toEqual([
			[2, 'sent'],
			[1, 'superseded']
		]);
	});
});

describe('payments through the local fake with the real SDK', () => {
	let fake: PaymentsFake;
	let hook: http.Server;
	let stripe: Stripe;

	beforeEach(async () => {
		// The app's webhook route, reduced to its service call.
		hook = http.createServer((req, res) => {
			let body = '';
			req.on('data', (d) => (body += d));
			req.on('end', async () => {
				try {
					const r = await handlePaymentWebhook(
						db,
						body,
						(req.headers['stripe-signature'] as string) ?? null,
						{
							secret: SECRET,
							send
						}
					);
					res.writeHead(200).end(JSON.stringify(r));
				} catch (e) {
					res.writeHead(e instanceof DomainError ? 400 : 500).end(String(e));
				}
			});
		});
		await new Promise<void>((r) => hook.listen(0, '127.0.0.1', () => r()));
		const hookPort = (hook.address() as { port: number }).port;
		fake = await startPaymentsFake({
			webhookUrl: `http://127.0.0.1:${hookPort}/`,
			webhookSecret: SECRET,
			apiKey: API_KEY,
			log: () => {}
		});
		stripe = new Stripe(API_KEY, {
			host: '127.0.0.1',
			port: fake.port,
			protocol: 'http',
			maxNetworkRetries: 0
		});
	});
	afterEach(async () => {
		await fake.close();
		await new Promise((r) => hook.close(r));
	});

	async function approved(): Promise<string> {
		const token = await sent();
		const sha = customerEstimatePage(db, token)!.estimate!.sha256;
		await decideEstimate(
			db,
			token,
			{ decision: 'approve', typedName: 'Rowan C', consent: true, seenSha256: sha },
			{ send }
		);
		return token;
	}

	it('pays the deposit only when the verified webhook arrives; a replay changes nothing', async () => {
		const token = await approved();
		await expect(startCheckout(db, token, 'balance', { origin: 'http://shop.test', stripe })).rejects.toThrow(
			/No balance is due/
		);
		const { url } = await startCheckout(db, token, 'deposit', { origin: 'http://shop.test', stripe });
		expect(url).toContain(`http://127.0.0.1:${fake.port}/pay/cs_test_`);
		// Before the payer acts, nothing is received (a return redirect alone would change nothing).
		expect(moneySummary(db, jobId).receivedMinor).toBe(0);
		const res = await fetch(`${url}/pay`, { method: 'POST', redirect: 'manual' });
		expect(res.status).toBe(303);
		expect(res.headers.get('location')).toBe(`http://shop.test/e/${token}?checkout=done`);
		const m = moneySummary(db, jobId);
		expect(m.receivedMinor).toBe(4275);
		expect(m.depositDueMinor).toBe(0);
		expect(m.balanceDueMinor).toBe(17100 - 4275);
		expect(mails.at(-1)!.subject).toMatch(/^Deposit received: €42\.75/);

		// Replay the very event the fake delivered: same id, freshly signed → duplicate, one payment.
		const session = fake.sessions.get(url.split('/').at(-1)!)!;
		const payload = JSON.stringify({
			id: fake.deliveries[0].eventId,
			object: 'event',
			type: 'checkout.session.completed',
			data: { object: session }
		});
		const again = await handlePaymentWebhook(
			db,
			payload,
			signWebhookPayload(payload, SECRET, Math.floor(Date.now() / 1000)),
			{
				secret: SECRET,
				send
			}
		);
		expect(again.outcome).toBe('duplicate');
		expect(db.select().from(table.payments).all()).toHaveLength(1);
	});

	it('the report e-mail carries the invoice and a link that pays the balance online', async () => {
		const token = await approved();
		const { url } = await startCheckout(db, token, 'deposit', { origin: 'http://shop.test', stripe });
		await fetch(`${url}/pay`, { method: 'POST', redirect: 'manual' });
		db.update(table.jobs).set({ status: 'approved' }).where(eq(table.jobs.id, jobId)).run();
		issueInvoice(db, jobId, sup);
		const settings = getSettings(db);
		updateSettings(db, { customerReport: { ...settings.customerReport, allowDraftSend: true } });
		await sendReportToCustomer(db, jobId, sup.id, { origin: 'http://shop.test', send });
		const report = mails.at(-1)!;
		expect(report.attachments!.map((a) => a.filename)).toEqual([
			`report-job-${jobId}.pdf`,
			'invoice-2026-0001.pdf'.replace('2026', String(new Date().getUTCFullYear()))
		]);
		expect(report.text).toContain('Balance due: €128.25'); // 171.00 − 42.75 deposit
		const payToken = /\/e\/([A-Za-z0-9_-]{43})/.exec(report.text)![1];
		const balance = await startCheckout(db, payToken, 'balance', { origin: 'http://shop.test', stripe });
		expect(fake.sessions.get(balance.url.split('/').at(-1)!)!.amount_total).toBe(12825);
		await fetch(`${balance.url}/pay`, { method: 'POST', redirect: 'manual' });
		expect(moneySummary(db, jobId).balanceDueMinor).toBe(0);
	});

	it('a declined checkout leaves the deposit unpaid', async () => {
		const token = await approved();
		const { url } = await startCheckout(db, token, 'deposit', { origin: 'http://shop.test', stripe });
		const res = await fetch(`${url}/decline`, { method: 'POST', redirect: 'manual' });
		expect(res.headers.get('location')).toContain('?checkout=cancelled');
		expect(fake.deliveries.map((d) => [d.type, d.status])).toEqual([['checkout.session.expired', 200]]);
		const m = moneySummary(db, jobId);
		expect(m.receivedMinor).toBe(0);
		expect(m.depositDueMinor).toBe(4275);
		expect(m.openCheckout).toBeNull();
	});

	it('an unsigned, tampered or foreign-signed event is refused and changes nothing', async () => {
		const token = await approved();
		const { url } = await startCheckout(db, token, 'deposit', { origin: 'http://shop.test', stripe });
		const session = {
			...fake.sessions.get(url.split('/').at(-1)!)!,
			status: 'complete',
			payment_status: 'paid'
		};
		const payload = JSON.stringify({
			id: 'evt_forged',
			object: 'event',
			type: 'checkout.session.completed',
			data: { object: session }
		});
		const now = Math.floor(Date.now() / 1000);
		await expect(handlePaymentWebhook(db, payload, null, { secret: SECRET })).rejects.toThrow(
			/no Stripe-Signature/
		);
		await expect(
			handlePaymentWebhook(db, payload, signWebhookPayload(payload, 'whsec_someone_else_entirely', now), {
				secret: SECRET
			})
		).rejects.toThrow(/does not verify/);
		const signed = signWebhookPayload(payload, SECRET, now);
		await expect(
			handlePaymentWebhook(db, payload.replace('4275', '1'), signed, { secret: SECRET })
		).rejects.toThrow(/does not verify/);
		expect(db.select().from(table.payments).all()).toHaveLength(0);
		expect(db.select().from(table.paymentEvents).all()).toHaveLength(0);
		// A correctly signed event whose amount differs from the checkout is recorded as refused.
		const cheap = JSON.stringify({
			id: 'evt_cheap',
			object: 'event',
			type: 'checkout.session.completed',
			data: { object: { ...session, amount_total: 1 } }
		});
		const r = await handlePaymentWebhook(db, cheap, signWebhookPayload(cheap, SECRET, now), {
			secret: SECRET
		});
		expect(r.outcome).toBe('amount-mismatch');
		expect(db.select().from(table.payments).all()).toHaveLength(0);
	});
});

describe('counter payments, refunds and the invoice', () => {
	async function approvedAndSignedOff(): Promise<void> {
		const token = await sent();
		const sha = customerEstimatePage(db, token)!.estimate!.sha256;
		await decideEstimate(
			db,
			token,
			{ decision: 'approve', typedName: 'Rowan C', consent: true, seenSha256: sha },
			{ send }
		);
		db.update(table.jobs).set({ status: 'approved' }).where(eq(table.jobs.id, jobId)).run();
	}

	it('records cash and a refund with receipts; refunds are for supervisors and at most what was received', async () => {
		await approvedAndSignedOff();
		await recordCounterPayment(db, jobId, { kind: 'payment', method: 'cash', amountMinor: 5000 }, tech, {
			send
		});
		expect(mails.at(-1)!.subject).toMatch(/^Payment received: €50\.00/);
		await expect(
			recordCounterPayment(db, jobId, { kind: 'refund', method: 'cash', amountMinor: 100 }, tech, { send })
		).rejects.toThrow(/supervisor/);
		await expect(
			recordCounterPayment(db, jobId, { kind: 'refund', method: 'cash', amountMinor: 5001 }, sup, { send })
		).rejects.toThrow(/at most what was received/);
		const m = await recordCounterPayment(
			db,
			jobId,
			{ kind: 'refund', method: 'bank-transfer', amountMinor: 1000 },
			sup,
			{ send }
		);
		expect(m.receivedMinor).toBe(4000);
		expect(m.balanceDueMinor).toBe(17100 - 4000);
		expect(() => db.update(table.payments).set({ amountMinor: 1 }).run()).toThrow(/cannot be changed/);
	});

	it('issues one numbered invoice after sign-off, and its PDF reads back', async () => {
		const token = await sent();
		expect(() => issueInvoice(db, jobId, sup)).toThrow(/signed off/);
		const sha = customerEstimatePage(db, token)!.estimate!.sha256;
		await decideEstimate(
			db,
			token,
			{ decision: 'approve', typedName: 'Rowan C', consent: true, seenSha256: sha },
			{ send }
		);
		db.update(table.jobs).set({ status: 'approved' }).where(eq(table.jobs.id, jobId)).run();
		expect(() => issueInvoice(db, jobId, tech)).toThrow(/supervisor/);
		const inv = issueInvoice(db, jobId, sup, T0);
		expect(inv.number).toBe('2026-0001');
		expect(() => issueInvoice(db, jobId, sup, T0)).toThrow(/already issued/);
		const pdf = await renderInvoicePdf(db, jobId);
		const dir = mkdtempSync(join(tmpdir(), 'invoice-'));
		writeFileSync(join(dir, 'i.pdf'), pdf!.pdf);
		// Read back by poppler's pdftotext, independent of the code that wrote it.
		const txt = execFileSync('pdftotext', ['-layout', join(dir, 'i.pdf'), '-'], { encoding: 'utf8' });
		expect(txt).toContain('Invoice 2026-0001');
		expect(txt).toContain('171.00');
		expect(moneySummary(db, jobId).totalSource).toBe('invoice');
	});
});
