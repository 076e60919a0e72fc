// A local stand-in for the hosted-checkout payment service, for development and tests: no money
// moves and no card is asked for. It answers the part of the API the app's SDK client uses
// (create and retrieve a checkout session), serves a hosted page where the payer chooses "pay"
// or "decline", and delivers webhook events signed the way the SDK's verification expects.
//
//   npm run payments            (npm start runs it beside the mail catcher)
//   PAYMENTS_PORT, PAYMENTS_WEBHOOK_URL, PAYMENTS_WEBHOOK_SECRET, PAYMENTS_API_KEY
import http from 'node:http';
import { randomBytes } from 'node:crypto';
import { pathToFileURL } from 'node:url';
import { signWebhookPayload } from '../src/lib/server/payment-signature';

export interface FakeSession {
	id: string;
	object: 'checkout.session';
	url: string;
	mode: string;
	status: 'open' | 'complete' | 'expired';
	payment_status: 'unpaid' | 'paid';
	amount_total: number;
	currency: string;
	success_url: string;
	cancel_url: string;
	client_reference_id: string | null;
	metadata: Record<string, string>;
	created: number;
	expires_at: number;
	livemode: false;
	/** What the payer sees (not part of the provider's object; kept for the hosted page). */
	description: string;
}

export interface PaymentsFake {
	port: number;
	url: string;
	sessions: Map<string, FakeSession>;
	/** Webhook deliveries made: event id, type and the app's answer status. */
	deliveries: { eventId: string; type: string; status: number }[];
	close(): Promise<void>;
}

/** Form bodies in the SDK's bracket notation (`line_items[0][price_data][currency]=eur`) as an object. */
export function parseBracketForm(body: string): Record<string, unknown> {
	const out: Record<string, unknown> = {};
	for (const [key, value] of new URLSearchParams(body)) {
		const path = key.replace(/\]/g, '').split('[');
		let node = out as Record<string, unknown>;
		path.forEach((k, i) => {
			if (i === path.length - 1) node[k] = value;
			else node = (node[k] ??= {}) as Record<string, unknown>;
		});
	}
	return out;
}

const esc = (s: string) =>
	s.replace(/[&<>"']/g, (c) => ({ '&': '&amp;', '<': '&lt;', '>': '&gt;', '"': '&quot;', "'": '&#39;' })[c]!);

function money(minor: number, currency: string): string {
	const exp = currency.toLowerCase() === 'jpy' ? 0 : 2;
	return `${(minor / 10 ** exp).toFixed(exp)} ${currency.toUpperCase()}`;
}

function hostedPage(s: FakeSession): string {
	const done = s.status !== 'open';
	return `<!doctype html><html lang="en"><head><meta charset="utf-8"><meta name="viewport" content="width=device-width,initial-scale=1">
<title>Test checkout</title><style>
body{font-family:system-ui,sans-serif;max-width:28rem;margin:2rem auto;padding:0 1rem;color:#111;background:#fafafa}
.box{border:1px solid #bbb;border-radius:8px;padding:1rem;background:#fff}
button{font-size:1rem;padding:.6rem 1.2rem;margin:.3rem .3rem 0 0;border-radius:6px;border:1px solid #333;cursor:pointer}
.pay{background:#14532d;color:#fff}.note{color:#444;font-size:.9rem}
</style></head><body><main class="box">
<h1>Test checkout</h1>
<p class="note">Local payment stand-in for development: no card is asked for and no money moves.</p>
<p>${esc(s.description)}</p>
<p><strong data-testid="fake-amount">${esc(money(s.amount_total, s.currency))}</strong></p>
${
	done
		? `<p data-testid="fake-state">This checkout is ${esc(s.status)}.</p>`
		: `<form method="post" action="/pay/${esc(s.id)}/pay"><button class="pay" data-testid="fake-pay">Pay</button></form>
<form method="post" action="/pay/${esc(s.id)}/decline"><button data-testid="fake-decline">Decline</button></form>`
}
</main></body></html>`;
}

export async function startPaymentsFake(opts: {
	port?: number;
	host?: string;
	webhookUrl: string;
	webhookSecret: string;
	apiKey: string;
	log?: (line: string) => void;
}): Promise<PaymentsFake> {
	const host = opts.host ?? '127.0.0.1';
	const log = opts.log ?? ((l: string) => console.log(l));
	const sessions = new Map<string, FakeSession>();
	const deliveries: PaymentsFake['deliveries'] = [];
	let baseUrl = '';

	async function deliver(type: string, session: FakeSession): Promise<void> {
		const event = {
			id: `evt_fake_${randomBytes(12).toString('hex')}`,
			object: 'event',
			type,
			created: Math.floor(Date.now() / 1000),
			livemode: false,
			data: { object: session }
		};
		const payload = JSON.stringify(event);
		for (let attempt = 1; attempt <= 4; attempt++) {
			try {
				const res = await fetch(opts.webhookUrl, {
					method: 'POST',
					headers: {
						'content-type': 'application/json',
						'stripe-signature': signWebhookPayload(payload, opts.webhookSecret, Math.floor(Date.now() / 1000))
					},
					body: payload
				});
				deliveries.push({ eventId: event.id, type, status: res.status });
				log(`[payments] ${type} ${session.id} → ${res.status}`);
				if (res.ok) return;
			} catch (e) {
				log(`[payments] ${type} ${session.id} delivery failed: ${e instanceof Error ? e.message : e}`);
			}
			await new Promise((r) => setTimeout(r, 250 * 2 ** attempt));
		}
	}

	const server = http.createServer((req, res) => {
		let body = '';
		req.setEncoding('utf8');
		req.on('data', (d: string) => {
			body += d;
			if (body.length > 64 * 1024) req.destroy();
		});
		req.on('end', () => {
			void route(req, res, body).catch((e) => {
				res.writeHead(500, { 'content-type': 'application/json' });
				res.end(JSON.stringify({ error: { message: String(e) } }));
			});
		});
	});

	const apiError = (res: http.ServerResponse, status: number, message: string) => {
		res.writeHead(status, { 'content-type': 'application/json' });
		res.end(JSON.stringify({ error: { type: 'invalid_request_error', message } }));
	};

	async function route(req: http.IncomingMessage, res: http.ServerResponse, body: string) {
		const url = new URL(req.url ?? '/', baseUrl);
		const parts = url.pathname.split('/').filter(Boolean);
		if (parts[0] === 'v1') {
			if (req.headers.authorization !== `Bearer ${opts.apiKey}`) return apiError(res, 401, 'Invalid API key');
			if (req.method === 'POST' && url.pathname === '/v1/checkout/sessions') {
				const f = parseBracketForm(body) as {
					mode?: string;
					success_url?: string;
					cancel_url?: string;
					client_reference_id?: string;
					metadata?: Record<string, string>;
					line_items?: Record<string, { quantity?: string; price_data?: Record<string, unknown> }>;
				};
				const items = Object.values(f.line_items ?? {});
				if (!f.success_url || !f.cancel_url || items.length === 0)
					return apiError(res, 400, 'success_url, cancel_url and line_items are required');
				let total = 0;
				let currency = '';
				let description = '';
				for (const it of items) {
					const pd = it.price_data as {
						currency?: string;
						unit_amount?: string;
						product_data?: { name?: string };
					};
					const amount = Number(pd?.unit_amount);
					const qty = Number(it.quantity ?? 1);
					if (!Number.isInteger(amount) || amount < 0 || !Number.isInteger(qty) || qty < 1 || !pd?.currency)
						return apiError(
							res,
							400,
							'each line item needs price_data.currency, an integer unit_amount and a quantity'
						);
					total += amount * qty;
					currency = pd.currency;
					description ||= pd.product_data?.name ?? '';
				}
				const id = `cs_test_${randomBytes(16).toString('hex')}`;
				const now = Math.floor(Date.now() / 1000);
				const s: FakeSession = {
					id,
					object: 'checkout.session',
					url: `${baseUrl}/pay/${id}`,
					mode: f.mode ?? 'payment',
					status: 'open',
					payment_status: 'unpaid',
					amount_total: total,
					currency,
					success_url: f.success_url,
					cancel_url: f.cancel_url,
					client_reference_id: f.client_reference_id ?? null,
					metadata: f.metadata ?? {},
					created: now,
					expires_at: now + 24 * 3600,
					livemode: false,
					description
				};
				sessions.set(id, s);
				res.writeHead(200, { 'content-type': 'application/json' });
				return res.end(JSON.stringify(s));
			}
			if (req.method === 'GET' && parts[1] === 'checkout' && parts[2] === 'sessions' && parts[3]) {
				const s = sessions.get(parts[3]);
				if (!s) return apiError(res, 404, `No such checkout.session: '${parts[3]}'`);
				res.writeHead(200, { 'content-type': 'application/json' });
				return res.end(JSON.stringify(s));
			}
			return apiError(res, 404, `Unrecognized request URL (${req.method}: ${url.pathname})`);
		}
		if (parts[0] === 'pay' && parts[1]) {
			const s = sessions.get(parts[1]);
			if (!s) {
				res.writeHead(404, { 'content-type': 'text/plain' });
				return res.end('No such checkout');
			}
			if (req.method === 'GET' && parts.length === 2) {
				res.writeHead(200, { 'content-type': 'text/html; charset=utf-8' });
				return res.end(hostedPage(s));
			}
			if (req.method === 'POST' && (parts[2] === 'pay' || parts[2] === 'decline') && s.status === 'open') {
				const paid = parts[2] === 'pay';
				s.status = paid ? 'complete' : 'expired';
				s.payment_status = paid ? 'paid' : 'unpaid';
				await deliver(paid ? 'checkout.session.completed' : 'checkout.session.expired', s);
				res.writeHead(303, { location: paid ? s.success_url : s.cancel_url });
				return res.end();
			}
			res.writeHead(409, { 'content-type': 'text/plain' });
			return res.end(`This checkout is ${s.status}`);
		}
		res.writeHead(404, { 'content-type': 'text/plain' });
		res.end('Local test payment service: /v1/checkout/sessions and /pay/<id>');
	}

	await new Promise<void>((resolve, reject) => {
		server.once('error', reject);
		server.listen(opts.port ?? 0, host, () => resolve());
	});
	const port = (server.address() as { port: number }).port;
	baseUrl = `http://${host}:${port}`;
	return {
		port,
		url: baseUrl,
		sessions,
		deliveries,
		close: () => new Promise<void>((r) => server.close(() => r()))
	};
}

if (import.meta.url === pathToFileURL(process.argv[1] ?? '').href) {
	const appPort = process.env.PORT ?? '3000';
	const payUrl = new URL(process.env.PAYMENTS_URL ?? 'http://127.0.0.1:8790');
	const fake = await startPaymentsFake({
		port: Number(payUrl.port || 8790),
		host: payUrl.hostname,
		webhookUrl: process.env.PAYMENTS_WEBHOOK_URL ?? `http://127.0.0.1:${appPort}/api/payments/webhook`,
		webhookSecret: process.env.PAYMENTS_WEBHOOK_SECRET ?? 'whsec_benchlight_local_fake_secret',
		apiKey: process.env.PAYMENTS_API_KEY ?? 'sk_test_benchlight_local_fake'
	});
	console.log(`[payments] local test checkout at ${fake.url} (no money moves)`);
}
