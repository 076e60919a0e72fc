// The bench follows the generator: off → residual noise and hum (total in-band, µV and dBV, hum by
// mains order), twin-tone → IMD instead of THD. Against the bridge simulator, whose hum rises at
// twice mains with its "tired filter capacitor" fault (supply ripple).
import { expect, test, type Page } from '@playwright/test';
import { ready, signIn } from './helpers';

const BRIDGE_OVERRIDE = process.env.BENCH_E2E_BRIDGE_URL;

/** "257.4 µV · −71.79 dBV" → volts (µV/mV/V), NaN for a dash. */
async function volts(page: Page, testId: string): Promise<number> {
	const text = ((await page.getByTestId(testId).textContent()) ?? '').trim();
	const m = /^([\d.]+)\s*(µV|mV|V)\b/.exec(text);
	if (!m) return NaN;
	return Number(m[1]) * (m[2] === 'µV' ? 1e-6 : m[2] === 'mV' ? 1e-3 : 1);
}

test('bench: generator off reads residual noise and hum; twin-tone reads IMD, not THD', async ({ page }) => {
	await signIn(page, 'tech1@example.com');
	await page.getByTestId('job-row').first().locator('a').first().click();
	await expect(page).toHaveURL(/\/jobs\/\d+$/);
	if (BRIDGE_OVERRIDE)
		await page.evaluate((url) => localStorage.setItem('benchlight-bridge-url', url), BRIDGE_OVERRIDE);
	await page.getByTestId('link-bench').click();
	await ready(page);
	await expect(page.getByTestId('link-state')).toHaveText(/^Connected$/, { timeout: 30_000 });
	await page.getByTestId('fault-filter-cap').uncheck();

	// ── generator off: residual noise ─────────────────────────────────────────
	await page.getByTestId('gen-kind').selectOption('off');
	await page.getByTestId('gen-apply').click();
	await expect(page.getByTestId('gen-state')).toHaveText('output off');
	await expect(page.getByTestId('readout-stimulus')).toContainText('Generator off');
	await expect(page.getByTestId('noise-total-left')).toBeVisible();
	// No THD of the hum, no picowatts: the tone figures are not shown at all.
	await expect(page.getByTestId('thd-left')).toHaveCount(0);
	await expect(page.getByTestId('power-left')).toHaveCount(0);
	await expect(page.getByTestId('noise-left')).toContainText(/(µV|mV) · −[\d.]+ dBV/);
	await expect(page.getByTestId('hum')).toBeVisible();
	const rippleBefore = await volts(page, 'hum-left-2');
	expect(rippleBefore).toBeGreaterThan(0);

	// A tired reservoir capacitor: ripple (twice mains) rises, and so does the total.
	const totalBefore = await volts(page, 'noise-left');
	await page.getByTestId('fault-filter-cap').check();
	await expect
		.poll(async () => (await volts(page, 'hum-left-2')) / rippleBefore, {
			message: 'ripple at twice mains rises with the tired filter capacitor',
			timeout: 30_000
		})
		.toBeGreaterThan(2);
	expect(await volts(page, 'noise-left')).toBeGreaterThan(totalBefore);
	await page.getByTestId('fault-filter-cap').uncheck();

	// ── twin-tone: IMD instead of THD ─────────────────────────────────────────
	await page.getByTestId('gen-kind').selectOption('twin-tone');
	await page.getByTestId('gen-level').fill('0.3');
	await page.getByTestId('gen-apply').click();
	await expect(page.getByTestId('readout-stimulus')).toContainText('twin-tone');
	await expect(page.getByTestId('imd-left')).toBeVisible({ timeout: 30_000 });
	await expect(page.getByTestId('imd-left')).toHaveText(/^[\d.]+$/);
	await expect(page.getByTestId('thd-left')).toHaveCount(0);
	await expect(page.getByTestId('thdn-left')).toHaveCount(0);

	// Leave the shared simulator as the other specs expect it.
	await page.getByTestId('gen-kind').selectOption('off');
	await page.getByTestId('gen-apply').click();
	await expect(page.getByTestId('gen-state')).toHaveText('output off');
});
