// Events from the payment service (signed out, like the customer's link). Only a verified
// signature is accepted (400 otherwise, nothing changed); each event id counts once.
import { db } from '$lib/server/db';
import { endpoint, json, readBodyCapped } from '$lib/server/api';
import { handlePaymentWebhook } from '$lib/server/payments';
import type { RequestHandler } from './$types';

export const POST: RequestHandler = endpoint(async (event) => {
	const body = new TextDecoder().decode(await readBodyCapped(event.request, 256 * 1024));
	const result = await handlePaymentWebhook(db, body, event.request.headers.get('stripe-signature'));
	return json({ received: true, ...result });
});
