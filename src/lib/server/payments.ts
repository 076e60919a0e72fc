// Money received on a job: hosted checkouts (deposit at approval, balance after the invoice)
// through the payment service's own SDK, webhook events that alone mark online money received
// (verified, idempotent by event id), counter payments and refunds by staff, receipts by e-mail,
// and the balance: total − everything received. No card data ever reaches the app.
import { and, desc, eq, sum } from 'drizzle-orm';
import Stripe from 'stripe';
import type { Db } from './db/open';
import * as table from './db/schema';
import { DomainError } from './errors';
import { audit } from './audit';
import { env } from './env';
import { validateListing as validate } from './validate';
import { getJob, requireJob } from './jobs';
import { getSettings } from './settings';
import { latestApprovedEstimate } from './estimates';
import { customerEstimatePage } from './estimates';
import { verifyWebhookEvent } from './payment-signature';
import { sendMail, type OutgoingMail } from './mail';
import { formatMoney, type CurrencyCode } from '$lib/money';
import type { SeenEstimate } from './estimate-hash';
import {
	counterPaymentSchema,
	PAYMENT_METHOD_LABELS,
	type CounterPaymentInput
} from '$lib/schemas/estimates';
import type { Role } from '$lib/schemas/enums';

type Actor = { id: string; role: Role };
type Send = (m: OutgoingMail) => Promise<{ messageId: string }>;

let client: Stripe | null = null;

/** The payment service's SDK client, pointed at PAYMENTS_URL (the local fake in development). */
export function paymentClient(): Stripe {
	if (!client) {
		const u = new URL(env.PAYMENTS_URL);
		client = new Stripe(env.PAYMENTS_API_KEY, {
			host: u.hostname,
			port: u.port || (u.protocol === 'https:' ? 443 : 80),
			protocol: u.protocol === 'https:' ? 'https' : 'http',
			maxNetworkRetries: 1,
			timeout: 10_000
		});
	}
	return client;
}

export interface PaymentView {
	id: number;
	kind: table.Payment['kind'];
	method: table.Payment['method'];
	methodLabel: string;
	amountMinor: number;
	currency: string;
	reference: string | null;
	recordedByName: string | null;
	receivedAt: string;
}

export interface MoneySummary {
	currency: CurrencyCode;
	/** What the customer owes in all: the invoice when issued, else the approved estimate. */
	totalMinor: number | null;
	totalSource: 'invoice' | 'estimate' | null;
	approvedVersion: number | null;
	/** Deposit asked for with the approved estimate, and how much of it is still due. */
	depositMinor: number;
	depositDueMinor: number;
	receivedMinor: number;
	balanceDueMinor: number | null;
	payments: PaymentView[];
	invoice: { id: number; number: string; issuedAt: string } | null;
	openCheckout: { id: number; purpose: 'deposit' | 'balance'; url: string; amountMinor: number } | null;
}

/** The job's money in one place (bounded: the newest 200 payments are listed, all are summed). */
export function moneySummary(db: Db, jobId: number): MoneySummary {
	requireJob(db, jobId);
	const settings = getSettings(db);
	const approved = latestApprovedEstimate(db, jobId);
	const seen = approved?.seenJson ? (JSON.parse(approved.seenJson) as SeenEstimate) : null;
	const invoice = db.select().from(table.invoices).where(eq(table.invoices.jobId, jobId)).get() ?? null;
	const invoiced = invoice ? (JSON.parse(invoice.documentJson) as InvoiceDocument) : null;
	const currency = (invoiced?.currency ?? seen?.currency ?? settings.money.currency) as CurrencyCode;
	const rows = db
		.select({ p: table.payments, name: table.users.name })
		.from(table.payments)
		.leftJoin(table.users, eq(table.users.id, table.payments.recordedBy))
		.where(eq(table.payments.jobId, jobId))
		.orderBy(desc(table.payments.receivedAt), desc(table.payments.id))
		.limit(200)
		.all();
	const received = Number(
		db
			.select({ s: sum(table.payments.amountMinor) })
			.from(table.payments)
			.where(eq(table.payments.jobId, jobId))
			.get()?.s ?? 0
	);
	const depositPaid = Number(
		db
			.select({ s: sum(table.payments.amountMinor) })
			.from(table.payments)
			.where(and(eq(table.payments.jobId, jobId), eq(table.payments.kind, 'deposit')))
			.get()?.s ?? 0
	);
	const totalMinor = invoiced ? invoiced.totals.grossMinor : seen ? seen.totals.grossMinor : null;
	const depositMinorAsked = seen?.depositMinor ?? 0;
	const open = db
		.select()
		.from(table.checkoutSessions)
		.where(and(eq(table.checkoutSessions.jobId, jobId), eq(table.checkoutSessions.status, 'open')))
		.orderBy(desc(table.checkoutSessions.id))
		.limit(1)
		.get();
	return {
		currency,
		totalMinor,
		totalSource: invoiced ? 'invoice' : seen ? 'estimate' : null,
		approvedVersion: approved?.version ?? null,
		depositMinor: depositMinorAsked,
		depositDueMinor: invoiced ? 0 : Math.max(0, depositMinorAsked - depositPaid),
		receivedMinor: received,
		balanceDueMinor: totalMinor === null ? null : totalMinor - received,
		payments: rows.map(({ p, name }) => ({
			id: p.id,
			kind: p.kind,
			method: p.method,
			methodLabel: PAYMENT_METHOD_LABELS[p.method] ?? p.method,
			amountMinor: p.amountMinor,
			currency: p.currency,
			reference: p.reference,
			recordedByName: name ?? null,
			receivedAt: p.receivedAt.toISOString()
		})),
		invoice: invoice
			? { id: invoice.id, number: invoice.number, issuedAt: invoice.issuedAt.toISOString() }
			: null,
		openCheckout: open
			? { id: open.id, purpose: open.purpose, url: open.url, amountMinor: open.amountMinor }
			: null
	};
}

/** The document an invoice freezes: the approved estimate's lines and totals plus its number. */
export interface InvoiceDocument extends SeenEstimate {
	invoiceNumber: string;
	issuedAt: string;
	customerName: string;
	unit: string;
}

/**
 * The customer starts a hosted checkout from their estimate link: the deposit once the estimate
 * is approved, or the balance once the invoice is issued. Returns the payment page's address.
 */
export async function startCheckout(
	db: Db,
	token: string,
	purpose: 'deposit' | 'balance',
	opts: { origin: string; nowMs?: number; stripe?: Stripe }
): Promise<{ url: string }> {
	const nowMs = opts.nowMs ?? Date.now();
	const page = customerEstimatePage(db, token, nowMs);
	if (!page) throw new DomainError('not-found', 'Not found');
	const money = moneySummary(db, page.jobId);
	const amountMinor =
		purpose === 'deposit'
			? money.depositDueMinor
			: money.invoice
				? Math.max(0, money.balanceDueMinor ?? 0)
				: 0;
	if (amountMinor <= 0)
		throw new DomainError(
			'conflict',
			purpose === 'deposit'
				? 'No deposit is due: it is paid already, or the estimate is not approved yet'
				: 'No balance is due: the invoice is paid, or it has not been issued yet'
		);
	const base = `${opts.origin.replace(/\/$/, '')}/e/${token}`;
	const session = await (opts.stripe ?? paymentClient()).checkout.sessions
		.create({
			mode: 'payment',
			line_items: [
				{
					quantity: 1,
					price_data: {
						currency: money.currency.toLowerCase(),
						unit_amount: amountMinor,
						product_data: {
							name: `${purpose === 'deposit' ? 'Deposit' : 'Balance'} for the ${page.unit} (job ${page.jobId})`
						}
					}
				}
			],
			success_url: `${base}?checkout=done`,
			cancel_url: `${base}?checkout=cancelled`,
			client_reference_id: `job-${page.jobId}`,
			metadata: { jobId: String(page.jobId), purpose }
		})
		.catch((e: unknown) => {
			throw new DomainError(
				'busy',
				`The payment service did not answer (${e instanceof Error ? e.message : String(e)}); nothing was charged, try again in a minute.`,
				undefined,
				{ 'retry-after': '30' }
			);
		});
	if (!session.url || session.amount_total !== amountMinor)
		throw new DomainError(
			'busy',
			'The payment service answered with a different amount; nothing was charged.'
		);
	const now = new Date(nowMs);
	db.transaction((tx) => {
		// One open checkout per job: an older one the customer abandoned is closed here.
		tx.update(table.checkoutSessions)
			.set({ status: 'expired', closedAt: now })
			.where(and(eq(table.checkoutSessions.jobId, page.jobId), eq(table.checkoutSessions.status, 'open')))
			.run();
		tx.insert(table.checkoutSessions)
			.values({
				jobId: page.jobId,
				purpose,
				estimateId: page.estimate?.id ?? null,
				providerSessionId: session.id,
				url: session.url!,
				amountMinor,
				currency: money.currency,
				createdAt: now
			})
			.run();
		audit(tx, {
			actorId: null,
			action: 'payment.checkout-started',
			jobId: page.jobId,
			subject: `job #${page.jobId}`,
			detail: { purpose, amountMinor, currency: money.currency, session: session.id },
			at: now
		});
	});
	return { url: session.url };
}

export type WebhookOutcome =
	'paid' | 'expired' | 'duplicate' | 'ignored' | 'unknown-session' | 'amount-mismatch';

/**
 * One webhook delivery: verified with the SDK's helper (400 when unsigned or tampered, nothing
 * changed), recorded once by event id (a replay answers `duplicate` and changes nothing), and
 * only `checkout.session.completed` with a paid status writes money received.
 */
export async function handlePaymentWebhook(
	db: Db,
	payload: string,
	signature: string | null,
	opts: { secret?: string; send?: Send; nowMs?: number } = {}
): Promise<{ outcome: WebhookOutcome; eventId: string }> {
	const event = verifyWebhookEvent(payload, signature, opts.secret ?? env.PAYMENTS_WEBHOOK_SECRET);
	const now = new Date(opts.nowMs ?? Date.now());
	let receipt: { paymentId: number; jobId: number } | null = null;
	const outcome = db.transaction((tx): WebhookOutcome => {
		const seen = tx
			.insert(table.paymentEvents)
			.values({ eventId: event.id, type: event.type, outcome: 'pending', receivedAt: now })
			.onConflictDoNothing()
			.returning({ id: table.paymentEvents.eventId })
			.get();
		if (!seen) return 'duplicate';
		const finish = (o: WebhookOutcome): WebhookOutcome => {
			tx.update(table.paymentEvents)
				.set({ outcome: o })
				.where(eq(table.paymentEvents.eventId, event.id))
				.run();
			return o;
		};
		if (event.type !== 'checkout.session.completed' && event.type !== 'checkout.session.expired')
			return finish('ignored');
		const s = event.data.object as Stripe.Checkout.Session;
		const row = tx
			.select()
			.from(table.checkoutSessions)
			.where(eq(table.checkoutSessions.providerSessionId, String(s.id)))
			.get();
		if (!row) return finish('unknown-session');
		if (event.type === 'checkout.session.expired') {
			if (row.status !== 'open') return finish('ignored');
			tx.update(table.checkoutSessions)
				.set({ status: 'expired', closedAt: now })
				.where(eq(table.checkoutSessions.id, row.id))
				.run();
			audit(tx, {
				actorId: null,
				action: 'payment.checkout-expired',
				jobId: row.jobId,
				subject: `job #${row.jobId}`,
				detail: { purpose: row.purpose, session: row.providerSessionId, event: event.id },
				at: now
			});
			return finish('expired');
		}
		if (s.payment_status !== 'paid') return finish('ignored');
		if (s.amount_total !== row.amountMinor || String(s.currency).toUpperCase() !== row.currency) {
			audit(tx, {
				actorId: null,
				action: 'payment.event-refused',
				jobId: row.jobId,
				subject: `job #${row.jobId}`,
				detail: {
					event: event.id,
					expected: { amountMinor: row.amountMinor, currency: row.currency },
					got: { amountMinor: s.amount_total, currency: s.currency }
				},
				at: now
			});
			return finish('amount-mismatch');
		}
		if (row.status === 'paid') return finish('duplicate');
		tx.update(table.checkoutSessions)
			.set({ status: 'paid', closedAt: now })
			.where(eq(table.checkoutSessions.id, row.id))
			.run();
		const payment = tx
			.insert(table.payments)
			.values({
				jobId: row.jobId,
				kind: row.purpose === 'deposit' ? 'deposit' : 'payment',
				method: 'online',
				amountMinor: row.amountMinor,
				currency: row.currency,
				reference: row.providerSessionId,
				checkoutSessionId: row.id,
				providerEventId: event.id,
				recordedBy: null,
				receivedAt: now
			})
			.returning({ id: table.payments.id })
			.get();
		audit(tx, {
			actorId: null,
			action: 'payment.received',
			jobId: row.jobId,
			subject: `job #${row.jobId}`,
			detail: { purpose: row.purpose, amountMinor: row.amountMinor, currency: row.currency, event: event.id },
			at: now
		});
		receipt = { paymentId: payment.id, jobId: row.jobId };
		return finish('paid');
	});
	if (receipt) await sendReceipt(db, receipt, opts.send ?? sendMail);
	return { outcome, eventId: event.id };
}

/** Staff record a payment or a refund at the counter; the customer gets a receipt. */
export async function recordCounterPayment(
	db: Db,
	jobId: number,
	input: CounterPaymentInput,
	actor: Actor,
	opts: { send?: Send; nowMs?: number } = {}
): Promise<MoneySummary> {
	const data = validate(counterPaymentSchema, input);
	if (data.kind === 'refund' && actor.role === 'technician')
		throw new DomainError('forbidden', 'Only a supervisor or admin records a refund');
	const now = new Date(opts.nowMs ?? Date.now());
	const paymentId = db.transaction((tx) => {
		requireJob(tx, jobId);
		const money = moneySummary(db, jobId);
		if (data.kind === 'refund' && data.amountMinor > money.receivedMinor)
			throw new DomainError(
				'conflict',
				`A refund is at most what was received: ${formatMoney(money.receivedMinor, money.currency)}`
			);
		const row = tx
			.insert(table.payments)
			.values({
				jobId,
				kind: data.kind,
				method: data.method,
				amountMinor: data.kind === 'refund' ? -data.amountMinor : data.amountMinor,
				currency: money.currency,
				reference: data.reference ?? null,
				recordedBy: actor.id,
				receivedAt: now
			})
			.returning({ id: table.payments.id })
			.get();
		audit(tx, {
			actorId: actor.id,
			action: data.kind === 'refund' ? 'payment.refunded' : 'payment.recorded',
			jobId,
			subject: `job #${jobId}`,
			detail: {
				method: data.method,
				amountMinor: data.amountMinor,
				currency: money.currency,
				reference: data.reference
			},
			at: now
		});
		return row.id;
	});
	await sendReceipt(db, { paymentId, jobId }, opts.send ?? sendMail);
	return moneySummary(db, jobId);
}

/** A receipt to the customer for one payment or refund; failures are logged, never thrown. */
async function sendReceipt(db: Db, r: { paymentId: number; jobId: number }, send: Send): Promise<void> {
	const job = getJob(db, r.jobId);
	const p = db.select().from(table.payments).where(eq(table.payments.id, r.paymentId)).get();
	if (!job?.customer.email || !p) return;
	const money = moneySummary(db, r.jobId);
	const amount = formatMoney(Math.abs(p.amountMinor), p.currency as CurrencyCode);
	const what =
		p.kind === 'refund' ? 'Refund' : p.kind === 'deposit' ? 'Deposit received' : 'Payment received';
	const shop = getSettings(db).shopName;
	try {
		await send({
			to: job.customer.email,
			subject: `${what}: ${amount} for your ${job.make} ${job.model} (job ${r.jobId})`,
			text: [
				`Hello ${job.customer.name},`,
				'',
				`${what}: ${amount} (${PAYMENT_METHOD_LABELS[p.method] ?? p.method}) on ${p.receivedAt.toISOString().slice(0, 10)}.`,
				money.balanceDueMinor !== null
					? `Balance due now: ${formatMoney(Math.max(0, money.balanceDueMinor), money.currency)}.`
					: '',
				'',
				'Thank you,',
				shop
			].join('\n')
		});
	} catch (e) {
		console.error(`receipt for payment #${p.id} not sent: ${e instanceof Error ? e.message : e}`);
	}
}
