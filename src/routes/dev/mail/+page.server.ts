// Caught mail in development: what the app sent through the local SMTP catcher (npm start runs
// it), read from the catcher's own list on loopback. Admins only; in a shop mail goes to its
// real SMTP server and this page says so.
import { z } from 'zod';
import { requireAdmin } from '$lib/server/guards';
import { env } from '$lib/server/env';
import { pageLoad } from '$lib/server/handlers';
import type { PageServerLoad } from './$types';

const messagesSchema = z
	.array(
		z.object({
			id: z.string(),
			receivedAt: z.string(),
			to: z.string(),
			subject: z.string(),
			text: z.string()
		})
	)
	.max(100_000);

export const load: PageServerLoad = pageLoad(async (event) => {
	requireAdmin(event);
	const listUrl = `http://127.0.0.1:${env.MAIL_UI_PORT}`;
	try {
		const res = await fetch(`${listUrl}/api/messages`, { signal: AbortSignal.timeout(1500) });
		const parsed = messagesSchema.safeParse(await res.json());
		if (!res.ok || !parsed.success) throw new Error('the catcher answered something else');
		return {
			listUrl,
			error: null,
			messages: parsed.data.slice(0, 50).map((m) => ({ ...m, text: m.text.slice(0, 1500) })),
			total: parsed.data.length
		};
	} catch (e) {
		return {
			listUrl,
			error: `No mail catcher answers on 127.0.0.1:${env.MAIL_UI_PORT} (${e instanceof Error ? e.message : String(e)}). \`npm start\` runs one in development; a shop's mail goes to its own SMTP server (SMTP_HOST, SMTP_PORT).`,
			messages: [],
			total: 0
		};
	}
});
