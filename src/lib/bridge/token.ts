// Short-lived bridge tokens: the app mints them for signed-in bench users, the bridge checks
// them in its HTTP upgrade handler. HS256 JWTs (jose) signed with BRIDGE_SECRET.
import { SignJWT, jwtVerify, errors } from 'jose';

export const BRIDGE_AUDIENCE = 'benchlight-bridge';
export const BRIDGE_ISSUER = 'benchlight';
export const BRIDGE_TOKEN_MAX_TTL_S = 300;
export const BRIDGE_TOKEN_DEFAULT_TTL_S = 120;
export const BRIDGE_SECRET_MIN_LENGTH = 32;
/** Roles allowed at the bench (mirrors ROLES in the server schema, kept here so the bridge needs no server code). */
export const BRIDGE_ROLES = ['technician', 'supervisor', 'admin'] as const;
export type BridgeRole = (typeof BRIDGE_ROLES)[number];

/** A token may say it was issued at most this far in the bridge's future (clock skew between PCs). */
export const BRIDGE_TOKEN_MAX_SKEW_S = 30;

export interface BridgeClaims {
	userId: string;
	role: BridgeRole;
	/**
	 * An opaque tag of the app session the token was minted for (never the session id itself):
	 * a stream may only be renewed with a token from the same session.
	 */
	sessionTag?: string;
}

export type BridgeTokenFailure =
	'missing' | 'malformed' | 'bad-signature' | 'expired' | 'not-yet-valid' | 'wrong-audience' | 'bad-claims';

export class BridgeTokenError extends Error {
	constructor(
		readonly reason: BridgeTokenFailure,
		message: string
	) {
		super(message);
		this.name = 'BridgeTokenError';
	}
}

function key(secret: string): Uint8Array {
	if (typeof secret !== 'string' || secret.length < BRIDGE_SECRET_MIN_LENGTH)
		throw new Error(`BRIDGE_SECRET must be at least ${BRIDGE_SECRET_MIN_LENGTH} characters`);
	return new TextEncoder().encode(secret);
}

/**
 * Mint a token for `claims` valid for `ttlS` seconds (at most 300). `nowMs` exists so tests
 * can mint tokens that are already expired without waiting.
 */
export async function mintBridgeToken(
	secret: string,
	claims: BridgeClaims,
	ttlS: number = BRIDGE_TOKEN_DEFAULT_TTL_S,
	nowMs: number = Date.now()
): Promise<{ token: string; expiresAt: string }> {
	if (!Number.isFinite(ttlS) || ttlS <= 0 || ttlS > BRIDGE_TOKEN_MAX_TTL_S)
		throw new RangeError(`bridge token lifetime must be 1–${BRIDGE_TOKEN_MAX_TTL_S} s`);
	if (!claims.userId || !(BRIDGE_ROLES as readonly string[]).includes(claims.role))
		throw new RangeError('bridge token needs a user id and a bench role');
	const iat = Math.floor(nowMs / 1000);
	const exp = iat + Math.floor(ttlS);
	if (claims.sessionTag !== undefined && !/^[\w-]{8,128}$/.test(claims.sessionTag))
		throw new RangeError('bridge token session tag must be 8–128 word characters');
	const token = await new SignJWT({
		role: claims.role,
		...(claims.sessionTag ? { sid: claims.sessionTag } : {})
	})
		.setProtectedHeader({ alg: 'HS256', typ: 'JWT' })
		.setSubject(claims.userId)
		.setAudience(BRIDGE_AUDIENCE)
		.setIssuer(BRIDGE_ISSUER)
		.setIssuedAt(iat)
		.setExpirationTime(exp)
		.sign(key(secret));
	return { token, expiresAt: new Date(exp * 1000).toISOString() };
}

/** Verify a token; resolves to its claims or rejects with a BridgeTokenError naming why. */
export async function verifyBridgeToken(
	secret: string,
	token: string | null | undefined,
	nowMs: number = Date.now()
): Promise<BridgeClaims & { expiresAt: Date }> {
	if (!token) throw new BridgeTokenError('missing', 'no bridge token');
	if (token.length > 4096) throw new BridgeTokenError('malformed', 'bridge token too long');
	let payload;
	try {
		({ payload } = await jwtVerify(token, key(secret), {
			algorithms: ['HS256'],
			audience: BRIDGE_AUDIENCE,
			issuer: BRIDGE_ISSUER,
			currentDate: new Date(nowMs),
			requiredClaims: ['exp', 'iat', 'sub']
		}));
	} catch (e) {
		if (e instanceof errors.JWTExpired) throw new BridgeTokenError('expired', 'bridge token expired');
		if (e instanceof errors.JWSSignatureVerificationFailed)
			throw new BridgeTokenError('bad-signature', 'bridge token signature does not verify');
		if (e instanceof errors.JWTClaimValidationFailed) {
			if (e.claim === 'aud')
				throw new BridgeTokenError('wrong-audience', 'bridge token is for another audience');
			throw new BridgeTokenError('bad-claims', `bridge token claim "${e.claim}" is invalid`);
		}
		throw new BridgeTokenError('malformed', 'bridge token is malformed');
	}
	const role = payload.role;
	if (typeof payload.sub !== 'string' || !payload.sub)
		throw new BridgeTokenError('bad-claims', 'bridge token has no subject');
	if (typeof role !== 'string' || !(BRIDGE_ROLES as readonly string[]).includes(role))
		throw new BridgeTokenError('bad-claims', 'bridge token has no bench role');
	const exp = payload.exp as number;
	const iat = payload.iat as number;
	// A token minted elsewhere with a long life is refused even though it verifies.
	if (exp - iat > BRIDGE_TOKEN_MAX_TTL_S)
		throw new BridgeTokenError('bad-claims', 'bridge token lifetime exceeds 5 minutes');
	// Issued in the future: a wrong clock or a token minted ahead to outlive its limit.
	if (iat > nowMs / 1000 + BRIDGE_TOKEN_MAX_SKEW_S)
		throw new BridgeTokenError(
			'not-yet-valid',
			`bridge token is issued ${Math.round(iat - nowMs / 1000)} s in the future (clocks more than ${BRIDGE_TOKEN_MAX_SKEW_S} s apart?)`
		);
	const sid = payload.sid;
	if (sid !== undefined && (typeof sid !== 'string' || !/^[\w-]{8,128}$/.test(sid)))
		throw new BridgeTokenError('bad-claims', 'bridge token session tag is malformed');
	return {
		userId: payload.sub,
		role: role as BridgeRole,
		...(sid ? { sessionTag: sid } : {}),
		expiresAt: new Date(exp * 1000)
	};
}
