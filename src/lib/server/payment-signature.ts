// Payment webhook signatures. The app verifies with the stripe SDK's own helper
// (Webhook.constructEvent); the local fake payment service signs with signWebhookPayload,
// in the header format that helper expects: `t=<unix seconds>,v1=<hex HMAC-SHA256 of "t.payload">`.
import { createHmac } from 'node:crypto';
import Stripe from 'stripe';
import { DomainError } from './errors';

/** Signature tolerance: an event signed longer ago than this is refused (replay window). */
export const WEBHOOK_TOLERANCE_S = 300;

export function signWebhookPayload(payload: string, secret: string, timestampS: number): string {
	const v1 = createHmac('sha256', secret).update(`${timestampS}.${payload}`, 'utf8').digest('hex');
	return `t=${timestampS},v1=${v1}`;
}

/** The verified event, or a 400 DomainError saying what is wrong (the SDK checks the signed time against the clock). */
export function verifyWebhookEvent(
	payload: string,
	signatureHeader: string | null,
	secret: string
): Stripe.Event {
	if (!signatureHeader) {
		throw new DomainError(
			'invalid',
			'The payment event has no Stripe-Signature header; only signed events from the payment service are accepted.'
		);
	}
	try {
		return Stripe.webhooks.constructEvent(payload, signatureHeader, secret, WEBHOOK_TOLERANCE_S);
	} catch (err) {
		throw new DomainError(
			'invalid',
			`The payment event's signature does not verify (${err instanceof Error ? err.message.split('\n')[0] : 'unknown'}); only events signed with this shop's webhook secret within ${WEBHOOK_TOLERANCE_S} s are accepted.`
		);
	}
}
