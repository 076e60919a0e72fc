// Sign-off end to end on the seeded demo job awaiting sign-off: a technician cannot reach the
// review or sign; a new failing after snapshot makes a requirement missing and the supervisor's
// approval is refused with the list; once a passing after snapshot is captured, a wrong password
// is refused plainly and the right one signs; the job locks, its page shows the signature intact,
// the audit page lists each step, and a reopening marks the signature superseded.
import { expect, test, type APIRequestContext, type Page } from '@playwright/test';
import { encodeWav } from '../../src/lib/dsp/wav';
import { DEMO_PASSWORD, ready, signIn } from './helpers';

const DEMO = { make: 'Pellowmere', model: 'SA-150' };
const PROFILE = 'Sign-off demo: THD+N at 1 kHz';

/** A 1 kHz tone with `third` of third harmonic, as the bench would upload it. */
function capture(third: number): Buffer {
	const n = 16384;
	const ch = new Float32Array(n);
	for (let i = 0; i < n; i++) {
		const w = (2 * Math.PI * 1000 * i) / 48000;
		ch[i] = 0.5 * Math.sin(w) + 0.5 * third * Math.sin(3 * w);
	}
	return Buffer.from(encodeWav([ch, ch], 48000));
}

/** Sign out (the browser forgets its session) and sign in as someone else. */
async function switchTo(page: Page, email: string) {
	await page.context().clearCookies();
	await signIn(page, email);
}

async function demoJobId(request: APIRequestContext): Promise<number> {
	const res = await request.get(`/api/jobs?q=${DEMO.model}`);
	const list = (await res.json()) as { items: { id: number; make: string }[] };
	return list.items.find((j) => j.make === DEMO.make)!.id;
}

async function uploadAfter(page: Page, baseURL: string, jobId: number, third: number, label: string) {
	const { profiles } = (await (await page.request.get('/api/limit-profiles')).json()) as {
		profiles: { id: number; name: string }[];
	};
	const profileId = profiles.find((p) => p.name === PROFILE)!.id;
	const res = await page.request.post(`/api/jobs/${jobId}/snapshots`, {
		headers: { origin: baseURL },
		multipart: {
			samples: { name: 'capture.wav', mimeType: 'audio/wav', buffer: capture(third) },
			meta: JSON.stringify({ label, stage: 'after', profileId })
		}
	});
	expect(res.status()).toBe(201);
}

test('a technician cannot reach the sign-off', async ({ page, baseURL }) => {
	await signIn(page, 'tech1@example.com');
	const id = await demoJobId(page.request);
	await page.goto(`/jobs/${id}`);
	await ready(page);
	await expect(page.getByTestId('job-status').getByTestId('status-badge')).toHaveText('Awaiting sign-off');
	await expect(page.getByTestId('link-review')).toHaveCount(0);
	await expect(page.getByTestId('awaiting-signoff')).toBeVisible();
	const review = await page.goto(`/jobs/${id}/review`);
	expect(review!.status()).toBe(403);
	const api = await page.request.post(`/api/jobs/${id}/sign-off`, {
		headers: { origin: baseURL!, 'content-type': 'application/json' },
		data: { decision: 'approve', comment: '', password: DEMO_PASSWORD }
	});
	expect(api.status()).toBe(403);
	const audit = await page.goto('/audit');
	expect(audit!.status()).toBe(403);
});

test('a supervisor is refused while a requirement is missing, then signs off with the password', async ({
	page,
	baseURL
}) => {
	// ── the technician captures an after snapshot that fails (2 % third harmonic) ─
	await signIn(page, 'tech1@example.com');
	const id = await demoJobId(page.request);
	await uploadAfter(page, baseURL!, id, 0.02, 'After: recheck at 1 kHz');

	// ── the supervisor reviews: one requirement missing, approval refused with the list ─
	await switchTo(page, 'supervisor@example.com');
	await page.goto(`/jobs/${id}`);
	await ready(page);
	await page.getByTestId('link-review').click();
	await expect(page).toHaveURL(new RegExp(`/jobs/${id}/review$`));
	await ready(page);
	const missing = page.locator('[data-testid="requirement"][data-met="false"]');
	await expect(missing).toHaveCount(1);
	await expect(missing).toContainText('Missing: An after snapshot with a passing verdict');
	// The seed's passed soak and passed safety check (bench worksheets) both count.
	const met = page.locator('[data-testid="requirement"][data-met="true"]');
	await expect(met).toHaveCount(2);
	await expect(met.filter({ hasText: 'A passed soak run' })).toHaveCount(1);
	await expect(met.filter({ hasText: 'A passed electrical safety check' })).toHaveCount(1);
	await expect(page.getByTestId('review-snapshot-before')).toContainText('Fail');
	await expect(page.getByTestId('link-compare')).toHaveAttribute(
		'href',
		new RegExp(`/jobs/${id}/compare\\?s=\\d+,\\d+$`)
	);
	await page.getByTestId('sign-comment').fill('Looks fine to me');
	await page.getByTestId('sign-password').fill(DEMO_PASSWORD);
	await page.getByTestId('sign-submit').click();
	const refusal = page.getByTestId('sign-off-error');
	await expect(refusal).toContainText('Not ready for sign-off: 1 requirement missing');
	await expect(refusal).toContainText('failed a limit check');
	await expect(page.getByTestId('sign-comment')).toHaveValue('Looks fine to me');

	// ── the technician fixes it: a passing after snapshot ──────────────────
	await switchTo(page, 'tech1@example.com');
	await uploadAfter(page, baseURL!, id, 0.0002, 'After: bias reset, 1 kHz');

	// ── the supervisor signs: a wrong password first, then the right one ───
	await switchTo(page, 'supervisor@example.com');
	await page.goto(`/jobs/${id}/review`);
	await ready(page);
	await expect(page.locator('[data-testid="requirement"][data-met="false"]')).toHaveCount(0);
	await page.getByTestId('sign-comment').fill('Both channels well inside limits; soak clean.');
	await page.getByTestId('sign-password').fill('not my password');
	await page.getByTestId('sign-submit').click();
	await expect(page.getByTestId('sign-off-error')).toContainText('That password is not right');
	await page.getByTestId('sign-password').fill(DEMO_PASSWORD);
	await page.getByTestId('sign-submit').click();

	// ── signed off and locked; the signature checks out ─────────────────────
	await expect(page).toHaveURL(new RegExp(`/jobs/${id}$`));
	await ready(page);
	await expect(page.getByTestId('job-status').getByTestId('status-badge')).toHaveText('Signed off');
	const record = page.getByTestId('sign-off-standing');
	await expect(record).toContainText('Rowan Thistlewood');
	await expect(record).toContainText('approved for return to the customer');
	await expect(record).toContainText('Both channels well inside limits');
	await expect(record).toContainText(/SHA-256 [0-9a-f]{64}/);
	await expect(page.getByTestId('sign-off-intact')).toBeVisible();
	await expect(page.getByTestId('job-locked')).toBeVisible();
	await expect(page.getByTestId('log-form')).toHaveCount(0);
	await expect(page.getByTestId('link-review')).toHaveCount(0);
	const late = await page.request.post(`/api/jobs/${id}/log`, {
		headers: { origin: baseURL!, 'content-type': 'application/json' },
		data: { text: 'Late entry', minutes: 1 }
	});
	expect(late.status()).toBe(409);

	// ── the audit page lists each step ─────────────────────────────────────
	await page.goto(`/audit?job=${id}`);
	await ready(page);
	const entries = page.getByTestId('audit-list').getByTestId('audit-entry');
	await expect(entries.first()).toBeVisible();
	await expect(page.getByTestId('audit-list').locator('[data-action="sign-off.approved"]')).toContainText(
		'approved for return to the customer'
	);
	await expect(
		page.getByTestId('audit-list').locator('[data-action="job.status-changed"]').first()
	).toContainText('Awaiting sign-off → Signed off');
	await page.getByTestId('audit-action').selectOption('sign-off.');
	await page.getByTestId('audit-apply').click();
	await expect(page).toHaveURL(/action=sign-off\./);
	await expect(entries).toHaveCount(1);

	// ── the invoice: from the estimate the customer approved, once signed off ─
	await page.goto(`/jobs/${id}/estimate`);
	await ready(page);
	await expect(page.getByTestId('money-received')).not.toHaveText('€0.00'); // the seeded deposit
	await page.getByTestId('invoice-issue').click();
	await expect(page.getByTestId('invoice-number')).toHaveText(/^\d{4}-0001$/);
	const invoicePdf = await page.request.get(`/api/jobs/${id}/invoice.pdf`);
	expect(invoicePdf.status()).toBe(200);
	expect(invoicePdf.headers()['content-type']).toBe('application/pdf');
	expect((await invoicePdf.body()).subarray(0, 5).toString()).toBe('%PDF-');

	// ── reopening keeps the signature, marked superseded ────────────────────
	await page.goto(`/jobs/${id}`);
	await ready(page);
	await page.getByLabel('Reason for reopening').fill('Customer reports the hum is back');
	await page.getByTestId('reopen-submit').click();
	await expect(page.getByTestId('job-status').getByTestId('status-badge')).toHaveText('Awaiting sign-off');
	await expect(page.getByTestId('sign-off-superseded')).toContainText('Customer reports the hum is back');
	await expect(
		page.getByTestId('job-audit-trail').locator('[data-action="sign-off.superseded"]')
	).toBeVisible();
	await expect(page.getByTestId('log-form')).toBeVisible();

	// ── the review and audit pages fit a 390 px phone without sideways scrolling ─
	await page.setViewportSize({ width: 390, height: 844 });
	for (const path of [`/jobs/${id}/review`, '/audit']) {
		await page.goto(path);
		await ready(page);
		const overflowPx = await page.evaluate(
			() => document.documentElement.scrollWidth - document.documentElement.clientWidth
		);
		expect({ path, overflowPx }).toEqual({ path, overflowPx: 0 });
	}
});
