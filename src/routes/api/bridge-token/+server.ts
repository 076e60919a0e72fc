// Mints a short-lived bridge token for a signed-in bench user, with the URL of the
// shop's bridge (the `bridgeUrl` shop setting, else BRIDGE_URL).
import { json } from '@sveltejs/kit';
import { eq } from 'drizzle-orm';
import { z } from 'zod';
import type { RequestHandler } from './$types';
import { requireRole } from '$lib/server/guards';
import { env, requireBridgeSecret } from '$lib/server/env';
import { db, table } from '$lib/server/db';
import { mintBridgeToken, BRIDGE_TOKEN_DEFAULT_TTL_S } from '$lib/bridge/token';

const BridgeUrlSetting = z.string().regex(/^wss?:\/\/[^\s]+$/);

function bridgeUrl(): string {
	const row = db.select().from(table.settings).where(eq(table.settings.key, 'bridgeUrl')).get();
	const parsed = BridgeUrlSetting.safeParse(row?.value);
	return parsed.success ? parsed.data : env.BRIDGE_URL;
}

export const GET: RequestHandler = async (event) => {
	const user = requireRole(event, 'technician', 'supervisor', 'admin');
	const { token, expiresAt } = await mintBridgeToken(
		requireBridgeSecret(),
		{ userId: user.id, role: user.role },
		BRIDGE_TOKEN_DEFAULT_TTL_S
	);
	return json({ token, expiresAt, bridgeUrl: bridgeUrl() }, { headers: { 'cache-control': 'no-store' } });
};
