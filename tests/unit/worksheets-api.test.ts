// The worksheet API through the real route handlers on the seeded demo shop: GET answers the sheet
// with its version, PUT saves whole sheets and answers the next version, a stale version is a 409
// that names who saved, a bad sheet is a 400 listing every problem, an unknown kind a 404.
import { beforeAll, describe, expect, it } from 'vitest';
import { eq } from 'drizzle-orm';
import { db, table } from '$lib/server/db';
import { seedDemo } from '../../scripts/seed';
import * as route from '../../src/routes/api/jobs/[id]/worksheets/[kind]/+server';
import { intakeExample, powerUpExample } from '$lib/worksheet-examples';
import { callRoute, type RouteUser } from './route-call';

let jobId = 0;
let technician: RouteUser;
let supervisor: RouteUser;

const userOf = (email: string): RouteUser =>
	db
		.select({ id: table.users.id, email: table.users.email, name: table.users.name, role: table.users.role })
		.from(table.users)
		.where(eq(table.users.email, email))
		.get()!;

beforeAll(async () => {
	await seedDemo(db);
	technician = userOf('tech1@example.com');
	supervisor = userOf('supervisor@example.com');
	jobId = db.select({ id: table.jobs.id }).from(table.jobs).where(eq(table.jobs.status, 'diagnosing')).get()!
		.id;
});

const path = (kind: string) => `/api/jobs/${jobId}/worksheets/${kind}`;
const get = (kind: string, user: RouteUser | null = technician) =>
	callRoute(route.GET, { path: path(kind), params: { id: String(jobId), kind }, user });
const put = (kind: string, json: unknown, user: RouteUser | null = technician) =>
	callRoute(route.PUT, { method: 'PUT', path: path(kind), params: { id: String(jobId), kind }, user, json });

describe('GET/PUT /api/jobs/{id}/worksheets/{kind}', () => {
	it('reads version 0 before a save, then each save raises the version', async () => {
		expect((await get('power-up')).body).toMatchObject({ kind: 'power-up', data: null, version: 0 });
		const first = await put('power-up', { version: 0, data: powerUpExample({ finished: false }) });
		expect(first).toMatchObject({ status: 200, body: { version: 1, updatedByName: 'Tamsin Oakridge' } });
		const second = await put('power-up', { version: 1, data: powerUpExample() }, supervisor);
		expect(second).toMatchObject({ status: 200, body: { version: 2, updatedByName: 'Rowan Thistlewood' } });
		expect((await get('power-up')).body).toMatchObject({ version: 2, data: powerUpExample() });
	});

	it('409 on a stale version, naming who saved in between', async () => {
		const stale = await put('power-up', { version: 1, data: powerUpExample() });
		expect(stale.status).toBe(409);
		expect(stale.body.message).toMatch(/saved by Rowan Thistlewood/);
		expect(stale.body.issues).toEqual([{ path: 'version', message: 'The stored version is 2' }]);
	});

	it('400 listing every problem of a bad sheet; 404 for an unknown kind; 401 signed out', async () => {
		const bad = await put('intake', {
			version: 0,
			data: { ...intakeExample(), customerSpeakerOhms: 0, asReceived: 'smoking', extra: 1 }
		});
		expect(bad.status).toBe(400);
		expect((bad.body.issues as { path: string }[]).map((i) => i.path).sort()).toEqual([
			'',
			'asReceived',
			'customerSpeakerOhms'
		]);
		const unknown = await get('paint');
		expect(unknown).toMatchObject({ status: 404 });
		expect(unknown.body.message).toBe('No such worksheet: use one of intake, power-up, bias, safety');
		expect((await get('intake', null)).status).toBe(401);
	});
});
