// Bridge tokens: minting limits and every refusal reason.
import { describe, expect, it } from 'vitest';
import { SignJWT } from 'jose';
import {
	BRIDGE_AUDIENCE,
	BRIDGE_ISSUER,
	BridgeTokenError,
	mintBridgeToken,
	verifyBridgeToken
} from './token';

const SECRET = 'a-test-secret-that-is-long-enough-0123456789';
const OTHER = 'another-secret-that-is-long-enough-9876543210';

async function reason(p: Promise<unknown>): Promise<string> {
	try {
		await p;
		return 'accepted';
	} catch (e) {
		return e instanceof BridgeTokenError ? e.reason : `other: ${(e as Error).message}`;
	}
}

describe('bridge tokens', () => {
	it('mint and verify carry the user id and role, expiring within 5 minutes', async () => {
		const now = Date.UTC(2026, 0, 5, 9, 0, 0);
		const { token, expiresAt } = await mintBridgeToken(
			SECRET,
			{ userId: 'user-7', role: 'supervisor' },
			300,
			now
		);
		expect(expiresAt).toBe('2026-01-05T09:05:00.000Z');
		const claims = await verifyBridgeToken(SECRET, token, now + 1000);
		expect(claims).toMatchObject({ userId: 'user-7', role: 'supervisor' });
		await expect(mintBridgeToken(SECRET, { userId: 'u', role: 'admin' }, 301)).rejects.toThrow(RangeError);
		await expect(mintBridgeToken('short', { userId: 'u', role: 'admin' })).rejects.toThrow(/at least 32/);
	});

	it('refuses missing, expired, forged, wrong-audience and over-long tokens', async () => {
		const now = Date.now();
		const { token } = await mintBridgeToken(SECRET, { userId: 'u1', role: 'technician' }, 60, now);
		expect(await reason(verifyBridgeToken(SECRET, ''))).toBe('missing');
		expect(await reason(verifyBridgeToken(SECRET, null))).toBe('missing');
		expect(await reason(verifyBridgeToken(SECRET, 'not.a.jwt'))).toBe('malformed');
		expect(await reason(verifyBridgeToken(SECRET, token, now + 61_000))).toBe('expired');
		expect(await reason(verifyBridgeToken(OTHER, token))).toBe('bad-signature');
		const key = new TextEncoder().encode(SECRET);
		const iat = Math.floor(now / 1000);
		const otherAud = await new SignJWT({ role: 'technician' })
			.setProtectedHeader({ alg: 'HS256' })
			.setSubject('u1')
			.setAudience('some-other-service')
			.setIssuer(BRIDGE_ISSUER)
			.setIssuedAt(iat)
			.setExpirationTime(iat + 60)
			.sign(key);
		expect(await reason(verifyBridgeToken(SECRET, otherAud))).toBe('wrong-audience');
		const longLived = await new SignJWT({ role: 'technician' })
			.setProtectedHeader({ alg: 'HS256' })
			.setSubject('u1')
			.setAudience(BRIDGE_AUDIENCE)
			.setIssuer(BRIDGE_ISSUER)
			.setIssuedAt(iat)
			.setExpirationTime(iat + 3600)
			.sign(key);
		expect(await reason(verifyBridgeToken(SECRET, longLived))).toBe('bad-claims');
		const noRole = await new SignJWT({ role: 'customer' })
			.setProtectedHeader({ alg: 'HS256' })
			.setSubject('u1')
			.setAudience(BRIDGE_AUDIENCE)
			.setIssuer(BRIDGE_ISSUER)
			.setIssuedAt(iat)
			.setExpirationTime(iat + 60)
			.sign(key);
		expect(await reason(verifyBridgeToken(SECRET, noRole))).toBe('bad-claims');
		const badTag = await new SignJWT({ role: 'technician', sid: 'a b' })
			.setProtectedHeader({ alg: 'HS256' })
			.setSubject('u1')
			.setAudience(BRIDGE_AUDIENCE)
			.setIssuer(BRIDGE_ISSUER)
			.setIssuedAt(iat)
			.setExpirationTime(iat + 60)
			.sign(key);
		expect(await reason(verifyBridgeToken(SECRET, badTag))).toBe('bad-claims');
		const unsigned = `${Buffer.from('{"alg":"none"}').toString('base64url')}.${token.split('.')[1]}.`;
		expect(await reason(verifyBridgeToken(SECRET, unsigned))).not.toBe('accepted');
	});

	it('refuses a token issued more than 30 s in the future (clock skew allowance), accepts one within it', async () => {
		const now = Date.now();
		const ahead = async (s: number) =>
			(await mintBridgeToken(SECRET, { userId: 'u1', role: 'technician' }, 60, now + s * 1000)).token;
		expect(await reason(verifyBridgeToken(SECRET, await ahead(120), now))).toBe('not-yet-valid');
		expect(await reason(verifyBridgeToken(SECRET, await ahead(32), now))).toBe('not-yet-valid');
		expect(await reason(verifyBridgeToken(SECRET, await ahead(25), now))).toBe('accepted');
		expect(await reason(verifyBridgeToken(SECRET, await ahead(0), now))).toBe('accepted');
	});

	it('carries the session tag so a renewal can be matched to the same sign-in', async () => {
		const { token } = await mintBridgeToken(SECRET, {
			userId: 'u1',
			role: 'technician',
			sessionTag: 'Zm9vYmFyYmF6cXV4'
		});
		expect(await verifyBridgeToken(SECRET, token)).toMatchObject({
			userId: 'u1',
			sessionTag: 'Zm9vYmFyYmF6cXV4'
		});
		const plain = (await mintBridgeToken(SECRET, { userId: 'u1', role: 'technician' })).token;
		expect((await verifyBridgeToken(SECRET, plain)).sessionTag).toBeUndefined();
		await expect(
			mintBridgeToken(SECRET, { userId: 'u1', role: 'technician', sessionTag: 'no spaces' })
		).rejects.toThrow(RangeError);
	});
});
