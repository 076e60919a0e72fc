// The sign-off and audit API through the real route handlers on the seeded demo shop: the demo
// job awaiting sign-off meets the shop's requirements, a supervisor signs it with their password
// (201), a technician is refused (403), a wrong password is a 401 that says so, a job with a
// missing requirement is a 409 that lists it, and the audit API filters and refuses bad queries.
import { beforeAll, describe, expect, it } from 'vitest';
import { and, eq } from 'drizzle-orm';
import { db, table } from '$lib/server/db';
import { DEMO_PASSWORD, SIGN_OFF_DEMO, seedDemo } from '../../scripts/seed';
import * as signRoute from '../../src/routes/api/jobs/[id]/sign-off/+server';
import * as listRoute from '../../src/routes/api/jobs/[id]/sign-offs/+server';
import * as statusRoute from '../../src/routes/api/jobs/[id]/status/+server';
import * as auditRoute from '../../src/routes/api/audit/+server';
import { callRoute, type RouteUser } from './route-call';

let demoJob = 0;
let otherReviewJob = 0;
let supervisor: RouteUser;
let technician: RouteUser;

const userOf = (email: string): RouteUser =>
	db
		.select({ id: table.users.id, email: table.users.email, name: table.users.name, role: table.users.role })
		.from(table.users)
		.where(eq(table.users.email, email))
		.get()!;

beforeAll(async () => {
	await seedDemo(db);
	supervisor = userOf('supervisor@example.com');
	technician = userOf('tech1@example.com');
	demoJob = db
		.select({ id: table.jobs.id })
		.from(table.jobs)
		.where(and(eq(table.jobs.make, SIGN_OFF_DEMO.make), eq(table.jobs.model, SIGN_OFF_DEMO.model)))
		.get()!.id;
	otherReviewJob = db
		.select({ id: table.jobs.id })
		.from(table.jobs)
		.where(eq(table.jobs.status, 'awaiting-review'))
		.all()
		.find((j) => j.id !== demoJob)!.id;
});

const sign = (jobId: number, user: RouteUser | null, json: unknown) =>
	callRoute(signRoute.POST, {
		method: 'POST',
		path: `/api/jobs/${jobId}/sign-off`,
		params: { id: String(jobId) },
		user,
		json
	});

describe('POST /api/jobs/{id}/sign-off', () => {
	it('refuses a technician (403) and a bad body (400, every problem listed)', async () => {
		expect(
			(await sign(demoJob, technician, { decision: 'approve', comment: '', password: DEMO_PASSWORD })).status
		).toBe(403);
		const bad = await sign(demoJob, supervisor, { decision: 'maybe', comment: 5 });
		expect(bad.status).toBe(400);
		expect((bad.body.issues as { path: string }[]).map((i) => i.path).sort()).toEqual([
			'comment',
			'decision',
			'password'
		]);
	});

	it('409 lists what is missing on a job without evidence', async () => {
		const res = await sign(otherReviewJob, supervisor, {
			decision: 'approve',
			comment: '',
			password: DEMO_PASSWORD
		});
		expect(res.status).toBe(409);
		expect((res.body.issues as { path: string }[]).map((i) => i.path)).toEqual([
			'requirements.after-snapshot-pass',
			'requirements.passed-soak',
			'requirements.passed-safety-check'
		]);
	});

	it('401 with a clear message for a wrong password; nothing is signed', async () => {
		const res = await sign(demoJob, supervisor, {
			decision: 'approve',
			comment: '',
			password: 'not the password'
		});
		expect(res.status).toBe(401);
		expect(res.body.message).toBe('That password is not right: re-enter your own password to sign');
		expect(db.select().from(table.signOffs).all()).toEqual([]);
	});

	it('the status route will not approve (409); the seeded demo job signs off with the password (201) and locks', async () => {
		const viaStatus = await callRoute(statusRoute.POST, {
			method: 'POST',
			path: `/api/jobs/${demoJob}/status`,
			params: { id: String(demoJob) },
			user: supervisor,
			json: { status: 'approved' }
		});
		expect(viaStatus.status).toBe(409);
		const res = await sign(demoJob, supervisor, {
			decision: 'approve',
			comment: 'Both channels well inside limits',
			password: DEMO_PASSWORD
		});
		expect(res.status).toBe(201);
		expect(res.body).toMatchObject({
			jobId: demoJob,
			signerName: 'Rowan Thistlewood',
			meaning: 'approved for return to the customer',
			decision: 'approve',
			selfSignOff: false
		});
		expect(db.select().from(table.jobs).where(eq(table.jobs.id, demoJob)).get()!.status).toBe('approved');
		const again = await sign(demoJob, supervisor, {
			decision: 'approve',
			comment: '',
			password: DEMO_PASSWORD
		});
		expect(again.status).toBe(409);

		const list = await callRoute(listRoute.GET, {
			path: `/api/jobs/${demoJob}/sign-offs`,
			params: { id: String(demoJob) },
			user: technician
		});
		expect(list.status).toBe(200);
		expect((list.body.items as unknown[]).length).toBe(1);
		expect(list.body.standing).toMatchObject({ intact: true, differences: [] });
	});
});

describe('GET /api/audit', () => {
	const audit = (query: string, user: RouteUser = supervisor) =>
		callRoute(auditRoute.GET, { path: `/api/audit${query}`, params: {}, user });

	it('supervisors read the trail filtered by job and action; technicians are refused', async () => {
		expect((await audit('', technician)).status).toBe(403);
		const res = await audit(`?job=%23${demoJob}&action=sign-off.`);
		expect(res.status).toBe(200);
		expect((res.body.items as { action: string; jobId: number }[]).map((e) => [e.action, e.jobId])).toEqual([
			['sign-off.approved', demoJob]
		]);
	});

	it('400 naming every bad filter at once', async () => {
		const res = await audit('?job=abc&from=2026-13-01&to=2025-01-01&action=nope&pageSize=999');
		expect(res.status).toBe(400);
		expect((res.body.issues as { path: string }[]).map((i) => i.path).sort()).toEqual([
			'action',
			'from',
			'job',
			'pageSize'
		]);
	});
});
