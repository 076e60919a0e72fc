// The model notebook end to end in Chromium: the seeded demo model's notebook shows its past jobs
// (typed with other spacing and case, still one model), parts grouped by designator with how many
// units, and typical figures from enough units; an edit of the adjustment notes keeps the earlier
// version; intake suggests the notebook with the last complaint; the snapshot page says where the
// unit sits; the CSV carries units in its headers; the page fits 390 px and passes axe (WCAG 2.2 AA).
import { expect, test } from '@playwright/test';
import { ready, signIn } from './helpers';
import { axeViolations } from './axe';

test.use({ bypassCSP: true });

test('a model notebook: past jobs, parts by designator, typical figures, notes with history', async ({
	page
}) => {
	await signIn(page, 'tech1@example.com');

	// ── search finds the model however it is typed ──────────────────────────
	await page.goto('/models?q=PELLOWMERE%20sa-150');
	await ready(page);
	await expect(page.getByTestId('model-link')).toHaveCount(1);
	await page.getByTestId('model-link').click();
	await expect(page).toHaveURL(/\/models\/pellowmere\/sa150$/);
	await ready(page);

	// ── past jobs: the four earlier units and the one awaiting sign-off ──────
	await expect(page.getByTestId('notebook-title')).toHaveText(/Pellowmere SA-150/);
	await expect(page.getByTestId('notebook-job')).toHaveCount(5);
	await expect(page.getByTestId('notebook-jobs')).toContainText('Left channel cuts out');
	await expect(page.getByTestId('notebook-jobs')).toContainText('Found: Relay RL1 contacts pitted');

	// ── parts by designator: the filter caps on four of five units ──────────
	const caps = page.locator('[data-testid="designator-row"][data-ref="C401, C402"]');
	await expect(caps).toContainText('Main filter capacitor');
	await expect(caps.getByTestId('designator-units')).toHaveText('4 of 5 units');
	await expect(
		page.locator('[data-testid="designator-row"][data-ref="VR601"]').getByTestId('designator-units')
	).toHaveText('3 of 5 units');

	// ── typical figures: five units at 10 W into 8 Ω, 1 kHz ────────────────
	const typical = page.getByTestId('notebook-typical');
	await expect(typical.getByTestId('typical-conditions').first()).toContainText('load 8 Ω');
	await expect(typical.getByTestId('typical-conditions').first()).toContainText('5 units');
	const thdn = typical.locator('[data-testid="typical-row"][data-metric="thdnPercent"]').first();
	await expect(thdn).toContainText('THD+N');
	await expect(thdn).toContainText('%');
	await expect(thdn).not.toContainText('not enough units yet');

	// ── the CSV: units in the headers ───────────────────────────────────────
	const csv = await page.request.get('/api/models/pellowmere/sa150/typical.csv');
	expect(csv.status()).toBe(200);
	const header = (await csv.text()).split('\r\n')[0];
	expect(header).toContain('THD+N median (%)');
	expect(header).toContain('Power into load median (W)');

	// ── notes: an edit keeps the earlier version ────────────────────────────
	await expect(page.getByTestId('notes-meta')).toContainText('Version 2');
	await page.getByTestId('notes-input').fill('Idle current 20 mA per side works better on late units.');
	await page.getByRole('button', { name: 'Save notes' }).click();
	await expect(page.getByTestId('notes-meta')).toContainText('Version 3');
	await expect(page.getByTestId('notes-text')).toHaveText(
		'Idle current 20 mA per side works better on late units.'
	);
	await page.getByTestId('notes-history').locator('summary').click();
	await expect(page.getByTestId('notes-version')).toHaveCount(2);
	await expect(page.getByTestId('notes-version').first()).toContainText('VR601 trimmers wear');

	// ── 390 px and axe ──────────────────────────────────────────────────────
	await page.setViewportSize({ width: 390, height: 800 });
	await expect.poll(() => page.evaluate(() => document.documentElement.scrollWidth)).toBeLessThanOrEqual(390);
	expect(await axeViolations(page)).toEqual([]);
	await page.goto('/models');
	await ready(page);
	await expect.poll(() => page.evaluate(() => document.documentElement.scrollWidth)).toBeLessThanOrEqual(390);
	expect(await axeViolations(page)).toEqual([]);
	await page.setViewportSize({ width: 1280, height: 900 });
});

test('the job page links its notebook; a snapshot says where the unit sits; intake suggests the notebook', async ({
	page
}) => {
	await signIn(page, 'tech1@example.com');
	const jobs = await page.request.get('/api/jobs?q=SA-150&status=awaiting-review');
	const job = ((await jobs.json()) as { items: { id: number; model: string }[] }).items.find(
		(j) => j.model === 'SA-150'
	)!;
	await page.goto(`/jobs/${job.id}`);
	await ready(page);
	await page.getByTestId('job-notebook-link').click();
	await expect(page).toHaveURL(/\/models\/pellowmere\/sa150$/);
	// Any spelling in the address is sent on to the notebook's own.
	await page.goto('/models/PELLOWMERE/SA-150');
	await expect(page).toHaveURL(/\/models\/pellowmere\/sa150$/);

	// The demo job's after snapshot against the four earlier units.
	const snaps = await page.request.get(`/api/jobs/${job.id}/snapshots`);
	// The seeded one (the oldest): other specs may capture more on this job under other conditions.
	const after = ((await snaps.json()) as { snapshots: { id: number; stage: string }[] }).snapshots
		.filter((s) => s.stage === 'after')
		.sort((a, b) => a.id - b.id)[0];
	await page.goto(`/snapshots/${after.id}`);
	await ready(page);
	const lines = page.getByTestId('placement-line');
	await expect(lines.first()).toContainText(
		/^THD\+N \(L\) [\d.]+ % — typical for this model is .+ %, from 4 units/
	);

	// Intake: typing a known make and model brings the notebook and the last complaint.
	await page.goto('/jobs/new');
	await ready(page);
	await page.getByLabel('Make').fill('pellowmere');
	await page.getByLabel('Model').fill('sa 150');
	await expect(page.getByTestId('intake-notebook')).toContainText('5 jobs');
	await expect(page.getByTestId('intake-notebook')).toContainText(
		'Right channel distorts at moderate volume; hum after warm-up'
	);
});
