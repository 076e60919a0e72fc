// Mints a short-lived bridge token for a signed-in bench user, with the URL of the shop's
// bridge (the `bridgeUrl` shop setting, which falls back to BRIDGE_URL). Only for a session
// that still stands at this moment: an ended session (signed out, deactivated, role changed) gets
// 401 here, so the page cannot renew its open stream and the bridge closes it when its token runs out.
import { createHash } from 'node:crypto';
import { json } from '@sveltejs/kit';
import type { RequestHandler } from './$types';
import { requireRole } from '$lib/server/guards';
import { requireBridgeSecret } from '$lib/server/env';
import { db } from '$lib/server/db';
import { endpoint } from '$lib/server/api';
import { sessionIsLive } from '$lib/server/auth';
import { DomainError } from '$lib/server/errors';
import { getSetting } from '$lib/server/settings';
import { mintBridgeToken, BRIDGE_TOKEN_DEFAULT_TTL_S } from '$lib/bridge/token';

/** An opaque, stable tag of the session for the token (the session id itself stays on the server). */
function sessionTag(sessionId: string): string {
	return createHash('sha256')
		.update(`benchlight-bridge-session:${sessionId}`)
		.digest('base64url')
		.slice(0, 32);
}

export const GET: RequestHandler = endpoint(async (event) => {
	const user = requireRole(event, 'technician', 'supervisor', 'admin');
	const session = event.locals.session;
	if (!session || !sessionIsLive(db, session.id))
		throw new DomainError('unauthenticated', 'Your session has ended; sign in again');
	const { token, expiresAt } = await mintBridgeToken(
		requireBridgeSecret(),
		{ userId: user.id, role: user.role, sessionTag: sessionTag(session.id) },
		BRIDGE_TOKEN_DEFAULT_TTL_S
	);
	return json(
		{ token, expiresAt, expiresInS: BRIDGE_TOKEN_DEFAULT_TTL_S, bridgeUrl: getSetting(db, 'bridgeUrl') },
		{ headers: { 'cache-control': 'no-store' } }
	);
});
