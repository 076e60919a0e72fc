// The one place that reads environment variables; everything else imports `env`.
import { z } from 'zod';

const schema = z.object({
	NODE_ENV: z.string().default('development'),
	DATABASE_URL: z.string().min(1).default('data/benchlight.db'),
	ORIGIN: z.string().url().optional(),
	PORT: z.coerce.number().int().min(1).max(65535).default(3000),
	BRIDGE_SECRET: z.string().min(32, 'BRIDGE_SECRET must be at least 32 characters').optional(),
	BRIDGE_URL: z.string().default('ws://127.0.0.1:8787'),
	SMTP_HOST: z.string().default('127.0.0.1'),
	SMTP_PORT: z.coerce.number().int().default(2525),
	MAIL_FROM: z.string().default('Benchlight <bench@example.com>'),
	/** The local mail catcher's message list (development): /dev/mail reads it. */
	MAIL_UI_PORT: z.coerce.number().int().min(1).max(65535).default(8025),
	/**
	 * The hosted-checkout payment service the stripe SDK talks to: the local fake
	 * (scripts/payments-fake.ts) in development and tests, the provider's API in a shop.
	 */
	PAYMENTS_URL: z.string().url().default('http://127.0.0.1:8790'),
	PAYMENTS_API_KEY: z.string().min(1).default('sk_test_benchlight_local_fake'),
	/** Shared with the payment service: webhook events are verified with it. */
	PAYMENTS_WEBHOOK_SECRET: z.string().min(16).default('whsec_benchlight_local_fake_secret'),
	SESSION_IDLE_MINUTES: z.coerce
		.number()
		.int()
		.min(1)
		.default(60 * 8),
	SESSION_ABSOLUTE_HOURS: z.coerce
		.number()
		.int()
		.min(1)
		.default(24 * 7),
	/**
	 * How many reverse proxies in front of the app append to X-Forwarded-For (`on` = 1). Off (0,
	 * the default): the client is the connection's address and forwarded headers are ignored.
	 */
	TRUSTED_PROXY: z.preprocess(
		(v) => {
			const s = typeof v === 'string' ? v.trim().toLowerCase() : v;
			if (s === undefined || s === '' || s === 'off' || s === 'false') return 0;
			if (s === 'on' || s === 'true') return 1;
			return s;
		},
		z.coerce
			.number('TRUSTED_PROXY must be off, on, or the number of proxies (1–5)')
			.int('TRUSTED_PROXY must be off, on, or the number of proxies (1–5)')
			.min(0, 'TRUSTED_PROXY must be off, on, or the number of proxies (1–5)')
			.max(5, 'TRUSTED_PROXY must be off, on, or the number of proxies (1–5)')
	)
});

const parsed = schema.safeParse(process.env);
if (!parsed.success) {
	const lines = parsed.error.issues.map((i) => `  ${i.path.join('.')}: ${i.message}`).join('\n');
	throw new Error(`Benchlight cannot start: bad environment\n${lines}`);
}

export const env = parsed.data;

/** The bridge secret is required wherever tokens are minted; fail loudly when it is missing. */
export function requireBridgeSecret(): string {
	if (!env.BRIDGE_SECRET) {
		throw new Error(
			'BRIDGE_SECRET is not set (npm start writes one into .env); the bridge token cannot be signed'
		);
	}
	return env.BRIDGE_SECRET;
}
