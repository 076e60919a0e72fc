import { createHmac } from 'node:crypto';
import Stripe from 'stripe';
import { describe, expect, it } from 'vitest';
import { signWebhookPayload, verifyWebhookEvent } from '../../src/lib/server/payment-signature';

const secret = 'whsec_test_benchlight';
const event = {
	id: 'evt_1',
	object: 'event',
	type: 'checkout.session.completed',
	data: { object: { id: 'cs_1', object: 'checkout.session', amount_total: 4219 } }
};
const payload = JSON.stringify(event);

describe('payment webhook signatures', () => {
	it('the fake signs as the SDK expects: its own helper verifies it', () => {
		const now = Math.floor(Date.now() / 1000);
		const header = signWebhookPayload(payload, secret, now);
		// Cross-check with the SDK's own test-header generator (independent implementation).
		expect(header).toBe(Stripe.webhooks.generateTestHeaderString({ payload, secret, timestamp: now }));
		expect(header).toBe(
			`t=${now},v1=${createHmac('sha256', secret).update(`${now}.${payload}`).digest('hex')}`
		);
		expect(verifyWebhookEvent(payload, header, secret).id).toBe('evt_1');
	});

	it('refuses unsigned, tampered, wrong-secret and stale events with a 400', () => {
		const now = Math.floor(Date.now() / 1000);
		const header = signWebhookPayload(payload, secret, now);
		expect(() => verifyWebhookEvent(payload, null, secret)).toThrow(/no Stripe-Signature/);
		const tampered = payload.replace('4219', '1');
		expect(() => verifyWebhookEvent(tampered, header, secret)).toThrow(/does not verify/);
		expect(() => verifyWebhookEvent(payload, header, 'whsec_other')).toThrow(/does not verify/);
		const stale = signWebhookPayload(payload, secret, now - 3600);
		expect(() => verifyWebhookEvent(payload, stale, secret)).toThrow(/does not verify/);
		let code: string | undefined;
		try {
			verifyWebhookEvent(tampered, header, secret);
		} catch (err) {
			code = (err as { code: string }).code;
		}
		expect(code).toBe('invalid'); // a 400 through the endpoint helper
	});
});
