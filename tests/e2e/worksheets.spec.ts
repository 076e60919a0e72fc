// Bench worksheets end to end: a technician takes in a long-stored unit (stored for years ticked
// on the intake form), is refused the generator on the bench and a soak by the server, logs a
// three-step current-limited power-up (Enter adds each step), records bias cold and warm, passes
// the safety check; the supervisor's review then shows every worksheet and the sign-off goes
// through with the safety check among the requirements met.
import { expect, test, type Page } from '@playwright/test';
import { encodeWav } from '../../src/lib/dsp/wav';
import { DEMO_PASSWORD, ready, signIn } from './helpers';

const PROFILE = 'Sign-off demo: THD+N at 1 kHz';

async function switchTo(page: Page, email: string) {
	await page.context().clearCookies();
	await signIn(page, email);
}

function tone(): Buffer {
	const n = 16384;
	const ch = new Float32Array(n);
	for (let i = 0; i < n; i++) ch[i] = 0.5 * Math.sin((2 * Math.PI * 1000 * i) / 48000);
	return Buffer.from(encodeWav([ch, ch], 48000));
}

test('a long-stored unit from intake through power-up, bias and the safety check to sign-off', async ({
	page,
	baseURL
}) => {
	const origin = { origin: baseURL!, 'content-type': 'application/json' };
	const model = `VA-${Date.now() % 100000}`;

	// ── intake: stored for years ───────────────────────────────────────────
	await signIn(page, 'tech1@example.com');
	await page.goto('/jobs/new');
	await ready(page);
	await page.getByTestId('customer-new').click();
	await page.getByRole('textbox', { name: 'Name', exact: true }).fill('Sunniva Pettigrew-Ako');
	await page.getByLabel('Category').selectOption('valve-amplifier');
	await page.getByLabel('Make').fill('Veldmoor');
	await page.getByLabel('Model').fill(model);
	await page.getByLabel('Year').fill('1961');
	await page.getByLabel('Rated power').fill('15');
	await page.getByLabel('Rated load').fill('8');
	await page.getByLabel('Complaint').fill('Kept in a barn for thirty years.');
	await page.getByLabel('Unit’s mains setting').fill('110');
	// A 110 V setting in the 230 V demo shop is flagged before anyone plugs it in.
	await expect(page.getByTestId('intake-checklist')).toContainText('do not plug it in');
	await page.getByLabel('Unit’s mains setting').fill('230');
	await page.getByLabel(/Long in storage/).check();
	await page.getByTestId('intake-submit').click();
	await expect(page).toHaveURL(/\/jobs\/\d+$/);
	await ready(page);
	const id = Number(new URL(page.url()).pathname.split('/').pop());
	await expect(page.getByTestId('unit-caution')).toContainText('B+');
	await expect(page.getByTestId('bench-gate')).toContainText('stored for years');

	// ── the bench refuses the generator; the server refuses a soak and a capture ─
	await page.goto(`/jobs/${id}/bench`);
	await ready(page);
	const blocked = page.getByTestId('generator-blocked');
	await expect(blocked).toContainText('complete the first power-up sheet');
	await expect(page.getByTestId('gen-apply')).toBeEnabled();
	await page.getByTestId('gen-kind').selectOption('sine');
	await page.getByTestId('gen-apply').click();
	await expect(page.getByTestId('generator').getByRole('alert')).toContainText('stored for years');
	const soak = await page.request.post(`/api/jobs/${id}/soak-runs`, {
		headers: origin,
		data: {
			preset: 'custom',
			custom: { watts: 1, loadOhms: 8, frequencyHz: 1000, durationS: 600, channels: ['left'] }
		}
	});
	expect(soak.status()).toBe(409);
	expect(((await soak.json()) as { message: string }).message).toMatch(
		/^No soak run yet\. This unit is marked/
	);

	await page.goto(`/jobs/${id}/soak`);
	await ready(page);
	await expect(page.getByTestId('soak-gate')).toContainText('complete the first power-up sheet');
	await expect(page.getByTestId('soak-start')).toBeDisabled();

	// ── first power-up: three current-limited steps, Enter adds each ───────
	await page.goto(`/jobs/${id}/worksheets/power-up`);
	await ready(page);
	await expect(page.getByText('Never leave the unit unattended')).toBeVisible();
	await page.getByLabel('Current limited by').selectOption('both');
	await page.getByLabel('Series lamp').fill('60');
	const steps: [string, string, string, string][] = [
		['60', '35', '12.1 -12.3', 'Lamp glows, then dims'],
		['150', '70', '30.2 -30.5', 'No smell, faint hum'],
		['230', '110', '45.1 -45.4', 'Lamp dark, rails steady']
	];
	for (const [volts, mA, rails, seen] of steps) {
		await page.getByLabel('Mains applied', { exact: true }).fill(volts);
		await page.getByLabel('Current drawn', { exact: true }).fill(mA);
		await page.getByLabel('Rails', { exact: true }).fill(rails);
		await page.getByLabel('Held for', { exact: true }).fill('10');
		await page.getByLabel('What was seen', { exact: true }).fill(seen);
		await page.getByLabel('What was seen', { exact: true }).press('Enter');
	}
	await expect(page.getByTestId('power-up-steps').locator('tbody tr')).toHaveCount(3);
	await expect(page.getByLabel('Mains applied', { exact: true })).toBeFocused();
	await expect(page.locator('[data-testid="power-up-form"] canvas').first()).toBeVisible();
	await page.getByRole('checkbox', { name: /^Finished/ }).check();
	await page.getByTestId('save-worksheet').click();
	await expect(page.getByTestId('worksheet-message')).toContainText('Saved (version 1)');
	await expect(page.getByTestId('bench-gate')).toHaveCount(0);

	// ── the bench opens ───────────────────────────────────────────────────
	await page.goto(`/jobs/${id}/bench`);
	await ready(page);
	await expect(page.getByTestId('generator')).toBeVisible();
	await expect(page.getByTestId('generator-blocked')).toHaveCount(0);

	// ── bias: mA per valve, cold and warm; one out of tolerance is flagged ─
	await page.goto(`/jobs/${id}/worksheets/bias`);
	await ready(page);
	const channels = page.getByTestId('bias-channel');
	await expect(channels).toHaveCount(2);
	const fill = async (n: number, values: Record<string, string>) => {
		for (const [label, v] of Object.entries(values))
			await channels.nth(n).getByLabel(label, { exact: true }).fill(v);
	};
	await fill(0, { Target: '40', 'As found': '22', 'Set cold': '39.5', 'After 15–30 min': '41' });
	await fill(1, { Target: '40', 'As found': '55', 'Set cold': '40.2', 'After 15–30 min': '45' });
	// 45 mA against 40 mA is 12.5 % high: outside the shop's ±10 % (common practice).
	await expect(channels.nth(1).getByTestId('bias-flag-warm')).toHaveText('Out of tolerance');
	await fill(1, { 'After 15–30 min': '42.5' });
	await expect(channels.nth(1).getByTestId('bias-flag-warm')).toHaveText('Within tolerance');
	await page.getByTestId('save-worksheet').click();
	await expect(page.getByTestId('worksheet-message')).toContainText('Saved (version 1)');

	// ── safety check: the plain disclaimer, every item recorded and passed ─
	await page.goto(`/jobs/${id}/worksheets/safety`);
	await ready(page);
	await expect(page.getByTestId('safety-disclaimer')).toContainText(
		'does not replace the electrical safety testing that local law requires of a qualified person'
	);
	await page.locator('#safety-earthed').selectOption('yes');
	const item = (key: string) => page.locator(`[data-testid="safety-item"][data-key="${key}"]`);
	const record = async (
		key: string,
		result: 'Pass' | 'Not applicable',
		reading?: string,
		instrument = 'PT-2'
	) => {
		await item(key).getByLabel(result, { exact: true }).check();
		if (reading !== undefined) await item(key).getByLabel('Reading').fill(reading);
		if (result === 'Pass') await item(key).getByLabel('Instrument').fill(instrument);
	};
	await record('earthContinuity', 'Pass', '0.06');
	await record('insulation', 'Pass', '150');
	await record('leakage', 'Not applicable');
	await item('mainsCapacitors').getByLabel('Checked or replaced').selectOption('replaced');
	await record('mainsCapacitors', 'Pass', undefined, 'Visual');
	await record('fuseRating', 'Pass', '1');
	await record('mainsCord', 'Pass', undefined, 'Visual and tug test');
	await expect(page.getByTestId('safety-status')).toHaveAttribute('data-state', 'passed');
	await page.getByTestId('save-worksheet').click();
	await expect(page.getByTestId('worksheet-message')).toContainText('Saved (version 1)');

	// ── a passing after snapshot, and the job goes for sign-off ────────────
	const { profiles } = (await (await page.request.get('/api/limit-profiles')).json()) as {
		profiles: { id: number; name: string }[];
	};
	const capture = await page.request.post(`/api/jobs/${id}/snapshots`, {
		headers: { origin: baseURL! },
		multipart: {
			samples: { name: 'capture.wav', mimeType: 'audio/wav', buffer: tone() },
			meta: JSON.stringify({
				label: 'After restoration',
				stage: 'after',
				profileId: profiles.find((p) => p.name === PROFILE)!.id
			})
		}
	});
	expect(capture.status()).toBe(201);
	for (const status of ['diagnosing', 'repairing', 'testing', 'awaiting-review'])
		expect(
			(await page.request.post(`/api/jobs/${id}/status`, { headers: origin, data: { status } })).status()
		).toBe(200);

	// ── the supervisor's review shows every worksheet ─────────────────────
	await switchTo(page, 'supervisor@example.com');
	await page.goto(`/jobs/${id}/review`);
	await ready(page);
	const sheets = page.getByTestId('review-worksheets');
	await expect(sheets.getByTestId('record-intake')).toContainText('Stored for years');
	await expect(sheets.getByTestId('record-step')).toHaveCount(3);
	await expect(sheets.getByTestId('record-bias-channel')).toHaveCount(2);
	await expect(sheets.getByTestId('record-bias-channel').nth(1)).toContainText('42.5 mA');
	await expect(sheets.getByTestId('record-safety')).toContainText('Earth continuity: Pass, 0.06 Ω (PT-2)');
	await expect(
		page.locator('[data-testid="requirement"][data-met="true"]').filter({ hasText: 'safety check' })
	).toHaveCount(1);

	// A real-hardware soak cannot run in a test: the admin lifts that one requirement for this job's
	// sign-off, and puts it back after.
	await switchTo(page, 'admin@example.com');
	const before = (await (await page.request.get('/api/settings')).json()) as {
		signOff: Record<string, boolean>;
	};
	const patch = (signOff: Record<string, boolean>) =>
		page.request.patch('/api/settings', { headers: origin, data: { signOff } });
	expect((await patch({ ...before.signOff, requirePassedSoak: false })).status()).toBe(200);
	try {
		await switchTo(page, 'supervisor@example.com');
		await page.goto(`/jobs/${id}/review`);
		await ready(page);
		await expect(page.locator('[data-testid="requirement"][data-met="false"]')).toHaveCount(0);
		await page.getByTestId('sign-comment').fill('Restored; power-up, bias and safety check on record.');
		await page.getByTestId('sign-password').fill(DEMO_PASSWORD);
		await page.getByTestId('sign-submit').click();
		await expect(page).toHaveURL(new RegExp(`/jobs/${id}$`));
		await ready(page);
		await expect(page.getByTestId('job-status').getByTestId('status-badge')).toHaveText('Signed off');
		await expect(page.getByTestId('worksheet-line')).toHaveCount(4);
		await expect(page.locator('[data-testid="worksheet-line"][data-kind="safety"]')).toHaveAttribute(
			'data-state',
			'done'
		);
	} finally {
		await switchTo(page, 'admin@example.com');
		expect((await patch(before.signOff)).status()).toBe(200);
	}
});
