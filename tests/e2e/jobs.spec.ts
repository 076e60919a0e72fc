// The job queue end to end: a technician takes a unit in (after one refused submission),
// finds it through the filtered table, logs work and a part, moves it to review and cannot
// approve it; a supervisor is pointed to the review (signing, locking and reopening are in
// signoff.spec.ts).
import { expect, test, type Page } from '@playwright/test';
import { ready, signIn } from './helpers';

async function moveTo(page: Page, status: string, label: string) {
	await page.getByTestId(`status-to-${status}`).click();
	await expect(page.getByTestId('job-status').getByTestId('status-badge')).toHaveText(label);
}

test('technician takes a unit in and works it; only a supervisor approves', async ({ page, baseURL }) => {
	// Unique per run so the search finds exactly this job in a reused database.
	const model = `QX-${Date.now().toString(36).toUpperCase()}`;

	await signIn(page, 'tech1@example.com');
	await expect(page.getByTestId('current-role')).toHaveText('Technician');

	// ── intake, first refused ───────────────────────────────────────────────
	await page.getByTestId('new-job').click();
	await expect(page).toHaveURL(/\/jobs\/new$/);
	await page.getByTestId('customer-new').click();
	await page.getByRole('textbox', { name: 'Name', exact: true }).fill('Odile Marrowby');
	await page.getByLabel('E-mail').fill(`odile.${model.toLowerCase()}@example.org`);
	await page.getByLabel('Phone').fill('555-0199');
	await page.getByLabel('Category').selectOption('power-amplifier');
	await page.getByLabel('Make').fill('Quillmark');
	await page.getByLabel('Model').fill(model);
	await page.getByLabel('Serial number').fill('QM-0042');
	await page.getByLabel('Year').fill('1850');
	await page.getByLabel('Rated power').fill('100');
	await page.getByLabel('Rated load').fill('8');
	await page.getByLabel('Complaint').fill('Right channel hums and runs hot at idle.');
	await page.getByTestId('intake-submit').click();

	// Refused: the error sits beside the year, and everything typed is still there.
	await expect(page.getByTestId('error-year')).toContainText('1900');
	await expect(page).toHaveURL(/\/jobs\/new$/);
	await expect(page.getByLabel('Model')).toHaveValue(model);
	await expect(page.getByLabel('Complaint')).toHaveValue('Right channel hums and runs hot at idle.');
	await expect(page.getByLabel('Year')).toHaveValue('1850');

	await page.getByLabel('Year').fill('1978');
	await page.getByTestId('intake-submit').click();
	await expect(page).toHaveURL(/\/jobs\/\d+$/);
	const jobId = Number(new URL(page.url()).pathname.split('/').pop());
	await expect(page.getByTestId('job-title')).toHaveText(`Quillmark ${model}`);
	await expect(page.getByTestId('job-customer')).toContainText('Odile Marrowby');
	await expect(page.getByTestId('job-header')).toContainText('100 W');
	await expect(page.getByTestId('job-header')).toContainText('8 Ω');

	// ── find it in the filtered queue ───────────────────────────────────────
	await page.goto('/jobs');
	await ready(page);
	await page.getByTestId('jobs-search').fill(model);
	await page.getByTestId('jobs-status').selectOption('received');
	await expect(page.getByTestId('job-row')).toHaveCount(1);
	await expect(page.getByTestId('job-row')).toHaveAttribute('data-job-id', String(jobId));
	// The address follows the filters, so a reload keeps them.
	await expect(page).toHaveURL(new RegExp(`q=${model}`));
	await expect(page).toHaveURL(/status=received/);
	await page.reload();
	await ready(page);
	await expect(page.getByTestId('jobs-search')).toHaveValue(model);
	await expect(page.getByTestId('job-row')).toHaveCount(1);
	// A filter that excludes it empties the table.
	await page.getByTestId('jobs-status').selectOption('approved');
	await expect(page.getByTestId('jobs-empty')).toBeVisible();
	await page.getByTestId('jobs-status').selectOption('');
	await page.getByTestId('job-link').filter({ hasText: model }).click();
	await expect(page).toHaveURL(new RegExp(`/jobs/${jobId}$`));

	// ── work log ────────────────────────────────────────────────────────────
	await page
		.getByLabel('What was done')
		.fill('Measured rails: +42 V / -41 V. Right bias drifting; reflowed driver board joints.');
	await page.getByLabel('Minutes').fill('35');
	await page.getByRole('button', { name: 'Add entry' }).click();
	await expect(page.getByTestId('log-entry')).toHaveCount(1);
	await expect(page.getByTestId('log-entry')).toContainText('reflowed driver board joints');
	await expect(page.getByTestId('log-total')).toHaveText('35 min in total');

	// ── a part: cost typed in currency, stored and totalled in cents ────────
	await page.getByTestId('add-part-toggle').click();
	await page.getByLabel('Ref. designator').fill('c412');
	await page.getByLabel('Description').fill('Filter capacitor, right channel rail');
	await page.getByLabel('Value / rating').fill('10000 µF 63 V');
	await page.getByLabel('Quantity').fill('2');
	await page.getByLabel('Unit cost').fill('7.35');
	await page.getByLabel('Supplier').fill('Parts bin');
	await page.getByLabel('Verification note').fill('Weight and sleeve print checked');
	await page.getByRole('button', { name: 'Add part' }).click();
	const part = page.getByTestId('part-row');
	await expect(part).toHaveCount(1);
	await expect(part).toHaveAttribute('data-ref', 'C412');
	await expect(part).toContainText('14.70');
	await expect(page.getByTestId('parts-total')).toHaveText('14.70');

	// ── through the bench to review ─────────────────────────────────────────
	await moveTo(page, 'diagnosing', 'Diagnosing');
	await moveTo(page, 'repairing', 'Repairing');
	await moveTo(page, 'testing', 'Testing');
	await moveTo(page, 'awaiting-review', 'Awaiting sign-off');

	// A technician sees no approve control, and the server refuses a direct request.
	await expect(page.getByTestId('status-to-approved')).toHaveCount(0);
	await expect(page.getByTestId('awaiting-signoff')).toBeVisible();
	const direct = await page.request.post(`/api/jobs/${jobId}/status`, {
		headers: { origin: baseURL!, 'content-type': 'application/json' },
		data: { status: 'approved' }
	});
	expect(direct.status()).toBe(403);
	const viaAction = await page.request.post(`/jobs/${jobId}?/status`, {
		headers: { origin: baseURL!, 'x-sveltekit-action': 'true' },
		form: { status: 'approved' }
	});
	expect(await viaAction.json()).toMatchObject({ type: 'failure', status: 403 });
	await page.reload();
	await ready(page);
	await expect(page.getByTestId('job-status').getByTestId('status-badge')).toHaveText('Awaiting sign-off');

	// ── a supervisor is sent to the review: the status route never approves ─
	await page.getByTestId('sign-out').click();
	await expect(page).toHaveURL(/\/login$/);
	await signIn(page, 'supervisor@example.com');
	await page.goto(`/jobs/${jobId}`);
	await ready(page);
	await expect(page.getByTestId('status-to-approved')).toHaveCount(0);
	await expect(page.getByTestId('link-review')).toBeVisible();
	const bySupervisor = await page.request.post(`/api/jobs/${jobId}/status`, {
		headers: { origin: baseURL!, 'content-type': 'application/json' },
		data: { status: 'approved' }
	});
	expect(bySupervisor.status()).toBe(409);
	expect((await bySupervisor.json()).message).toMatch(/Review and sign off/);
});
