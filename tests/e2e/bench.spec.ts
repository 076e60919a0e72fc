// The bench end to end against the bridge simulator: a technician opens a job's bench, connects,
// sets a 1 kHz sine, reads back the gain the simulator was set to, switches on a fault and sees
// THD+N rise, captures a "before" snapshot, clears the fault, captures an "after" one, and finds
// both with their server-computed verdicts on the job page.
import { expect, test, type Page } from '@playwright/test';
import { ready, signIn } from './helpers';

/** Lets the spec run against a bridge other than the shop setting (a developer's own port). */
const BRIDGE_OVERRIDE = process.env.BENCH_E2E_BRIDGE_URL;

/** A readout as a number ("+20.00" → 20, "0.0857" → 0.0857; "—" → NaN). */
async function reading(page: Page, testId: string): Promise<number> {
	const text = (await page.getByTestId(testId).textContent()) ?? '';
	return Number(text.replace('−', '-').replace('+', '').trim());
}

/** Wait until a readout satisfies `ok` (the analysis runs several times a second). */
async function waitForReading(page: Page, testId: string, ok: (v: number) => boolean, what: string) {
	await expect
		.poll(
			async () => {
				const v = await reading(page, testId);
				return ok(v) ? 'ok' : `${testId} = ${v}`;
			},
			{ message: what, timeout: 30_000, intervals: [250] }
		)
		.toBe('ok');
}

async function capture(page: Page, label: string, stage: 'before' | 'after') {
	await page.getByTestId('capture-label').fill(label);
	await page.getByTestId(`stage-${stage}`).check();
	// The keyboard shortcut, from outside any field.
	await page.getByRole('heading', { name: 'Capture a snapshot' }).click();
	await page.keyboard.press('c');
	const stageLabel = stage === 'before' ? 'Before' : 'After';
	await expect(page.getByTestId('capture-result')).toContainText(`Saved “${label}” (${stageLabel})`);
}

test('bench: live gain, a fault and its repair, before/after snapshots with verdicts', async ({ page }) => {
	// Unique per run, so the job page shows exactly this run's pair in a reused database.
	const run = Date.now().toString(36).toUpperCase();
	const beforeLabel = `Under-biased output stage ${run}`;
	const afterLabel = `Bias reset to spec ${run}`;
	await signIn(page, 'tech1@example.com');

	// A job to work on: the first one in the queue.
	await page.getByTestId('job-row').first().locator('a').first().click();
	await expect(page).toHaveURL(/\/jobs\/\d+$/);
	const jobId = Number(/\/jobs\/(\d+)$/.exec(page.url())![1]);

	if (BRIDGE_OVERRIDE)
		await page.evaluate((url) => localStorage.setItem('benchlight-bridge-url', url), BRIDGE_OVERRIDE);
	await page.getByTestId('link-bench').click();
	await expect(page).toHaveURL(new RegExp(`/jobs/${jobId}/bench$`));
	await ready(page);

	// ── connect ─────────────────────────────────────────────────────────────
	await expect(page.getByTestId('link-state')).toHaveText(/^Connected$/, { timeout: 30_000 });
	await expect(page.getByTestId('link-source')).toHaveText('Simulator');
	await expect(page.getByTestId('caution')).toContainText('dummy load');
	await expect(page.getByTestId('caution')).toContainText('open output or a shorted one');

	// Start from a healthy unit whatever an earlier spec left on the shared simulator.
	const sim = page.getByTestId('simulator');
	await expect(sim).toBeVisible();
	await page.getByTestId('fault-under-bias').uncheck();
	await page.getByTestId('fault-noisy-selector').selectOption('');
	await page.getByTestId('fault-weak-device').selectOption('');

	// The caution is open until the generator is first turned on from this page.
	const caution = page.getByTestId('caution');
	await page.getByTestId('gen-kind').selectOption('off');
	await page.getByTestId('gen-apply').click();
	await expect(page.getByTestId('gen-state')).toHaveText('output off');
	await expect(caution).toHaveAttribute('open', '');
	await expect(caution).toContainText('attenuator');
	await expect(caution).toContainText('floating-ground');

	// ── a 1 kHz sine and a known gain ───────────────────────────────────────
	await page.getByTestId('gen-kind').selectOption('sine');
	await page.getByTestId('gen-frequency').fill('1000');
	await page.getByTestId('gen-level').fill('0.3');
	await page.getByTestId('gen-apply').click();
	await expect(page.getByTestId('gen-state')).toHaveText('on: sine');
	// Then it folds to its title, one tap from the full text.
	await expect(caution).not.toHaveAttribute('open');
	await page.getByTestId('show-caution').click();
	await expect(caution).toHaveAttribute('open', '');
	await page.getByTestId('sim-volume').fill('20');
	await expect(page.getByTestId('sim-volume-value')).toHaveText('+20.0 dB');

	await waitForReading(
		page,
		'frequency-left',
		(v) => Math.abs(v - 1000) < 0.5,
		'the fundamental reads 1 kHz'
	);
	// The simulator's volume is its gain at 1 kHz: the readout must agree within 0.1 dB.
	await waitForReading(page, 'gain-left', (v) => Math.abs(v - 20) <= 0.1, 'left gain within 0.1 dB of 20 dB');
	await waitForReading(
		page,
		'gain-right',
		(v) => Math.abs(v - 20) <= 0.1,
		'right gain within 0.1 dB of 20 dB'
	);
	await waitForReading(
		page,
		'thdn-left',
		(v) => v > 0 && v < 0.02,
		'a healthy unit reads well under 0.02 % THD+N'
	);
	const cleanThdn = await reading(page, 'thdn-left');

	// A profile with a 0.05 % THD+N limit, judged live and again by the server.
	await page.getByTestId('profile-select').selectOption({ label: 'Line preamp output, 1 kHz' });
	// Its set-up conditions are shown above Capture, before anything is captured.
	await expect(page.getByTestId('capture-setup')).toContainText('about 0.5 V rms at the output');
	await expect(page.getByTestId('live-verdict')).toHaveText(/PASS/);

	// ── a fault: crossover distortion from an under-biased output stage ─────
	await page.getByTestId('fault-under-bias').check();
	await waitForReading(
		page,
		'thdn-left',
		(v) => v > 5 * cleanThdn && v > 0.05,
		'THD+N rises well past the limit with the fault on'
	);
	await expect(page.getByTestId('live-verdict')).toHaveText(/FAIL/);
	await capture(page, beforeLabel, 'before');
	await expect(page.getByTestId('capture-verdict')).toHaveText('FAIL');

	// ── the repair ──────────────────────────────────────────────────────────
	await page.getByTestId('fault-under-bias').uncheck();
	await waitForReading(
		page,
		'thdn-left',
		(v) => v > 0 && v < 2 * cleanThdn,
		'THD+N falls back once the bias is right'
	);
	// Let the steadiness window refill with clean results before the "after" capture.
	await page.waitForTimeout(4000);
	await expect(page.getByTestId('live-verdict')).toHaveText(/PASS/);
	await capture(page, afterLabel, 'after');
	await expect(page.getByTestId('capture-verdict')).toHaveText('PASS');

	// ── both on the job page, with the server's verdicts ───────────────────
	await page.goto(`/jobs/${jobId}`);
	await ready(page);
	const rows = page.getByTestId('snapshot-row');
	const before = rows.filter({ hasText: beforeLabel });
	const after = rows.filter({ hasText: afterLabel });
	await expect(before.getByTestId('snapshot-verdict')).toHaveText(/fail/i);
	await expect(before.getByTestId('snapshot-stage')).toHaveText('Before');
	await expect(after.getByTestId('snapshot-verdict')).toHaveText(/pass/i);
	await expect(after.getByTestId('snapshot-stage')).toHaveText('After');
	await expect(after).toContainText('Tamsin Oakridge');

	// The stored result is the server's own analysis of the uploaded audio.
	const id = Number(await after.getAttribute('data-snapshot-id'));
	const detail = await page.request.get(`/api/snapshots/${id}`);
	expect(detail.status()).toBe(200);
	const body = (await detail.json()) as {
		results: {
			channels: { frequencyHz: number; gainDb: number; thdnPercent: number }[];
			conditions: { bandHz: number[]; stimulus: string; dcCoupled: boolean };
		};
	};
	expect(body.results.channels[0].frequencyHz).toBeCloseTo(1000, 0);
	expect(Math.abs(body.results.channels[0].gainDb - 20)).toBeLessThanOrEqual(0.1);
	expect(body.results.channels[0].thdnPercent).toBeLessThan(0.05);
	// The profile's band, not whatever the browser had set.
	expect(body.results.conditions.bandHz).toEqual([20, 20000]);
	// The bench said what drove the unit (a tone) and that the simulator's input passes DC.
	expect(body.results.conditions.stimulus).toBe('tone');
	expect(body.results.conditions.dcCoupled).toBe(true);

	// Leave the shared simulator as the other specs expect it.
	await page.goto(`/jobs/${jobId}/bench`);
	await expect(page.getByTestId('link-state')).toHaveText(/^Connected$/, { timeout: 30_000 });
	await page.getByTestId('sim-volume').fill('26');
	await expect(page.getByTestId('sim-volume-value')).toHaveText('+26.0 dB');
	await page.getByTestId('gen-kind').selectOption('off');
	await page.getByTestId('gen-apply').click();
	await expect(page.getByTestId('gen-state')).toHaveText('output off');
});

test('bench: no capture while the stream is stalled or the link is down, and the page says why', async ({
	page
}) => {
	// The page's socket to the bridge runs through this route, so the spec can stall the audio
	// (binary frames held back, control messages still flowing) or refuse the link altogether.
	let mode: 'live' | 'stall' | 'refuse' = 'live';
	let current: { close: () => Promise<void> } | null = null;
	await page.routeWebSocket(/\/stream\?token=/, (ws) => {
		if (mode === 'refuse') {
			void ws.close({ code: 1011, reason: 'bridge stopped (test)' });
			return;
		}
		const server = ws.connectToServer();
		server.onMessage((m) => {
			if (mode === 'live' || typeof m === 'string') ws.send(m);
		});
		ws.onMessage((m) => server.send(m));
		current = {
			close: async () => {
				await server.close();
				await ws.close({ code: 1011, reason: 'bridge stopped (test)' });
			}
		};
	});
	let posts = 0;
	page.on('request', (r) => {
		if (r.method() === 'POST' && /\/api\/jobs\/\d+\/snapshots$/.test(r.url())) posts++;
	});

	await signIn(page, 'tech1@example.com');
	await page.getByTestId('job-row').first().locator('a').first().click();
	await expect(page).toHaveURL(/\/jobs\/\d+$/);
	if (BRIDGE_OVERRIDE)
		await page.evaluate((url) => localStorage.setItem('benchlight-bridge-url', url), BRIDGE_OVERRIDE);
	await page.getByTestId('link-bench').click();
	await ready(page);
	await expect(page.getByTestId('link-state')).toHaveText(/^Connected$/, { timeout: 30_000 });

	const button = page.getByTestId('capture-button');
	const blocked = page.getByTestId('capture-blocked');
	await expect(button).toBeEnabled({ timeout: 30_000 });
	await expect(blocked).toHaveCount(0);
	await page.getByTestId('capture-label').fill('Must never be saved');

	// ── audio stalls, the link stays up ─────────────────────────────────────
	mode = 'stall';
	await expect(blocked).toContainText('the stream has stalled');
	await expect(button).toBeDisabled();
	await expect(page.getByTestId('link-state')).toHaveText(/^Connected$/);
	await page.getByRole('heading', { name: 'Capture a snapshot' }).click();
	await page.keyboard.press('c');
	await button.click({ force: true });

	// ── audio flows again: capture is back ──────────────────────────────────
	mode = 'live';
	await expect(blocked).toHaveCount(0);
	await expect(button).toBeEnabled();

	// ── the bridge goes away ────────────────────────────────────────────────
	mode = 'refuse';
	await current!.close();
	await expect(page.getByTestId('link-state')).toHaveText(/Reconnecting/);
	await expect(blocked).toContainText('the link to the bridge is down');
	await expect(button).toBeDisabled();
	await page.getByRole('heading', { name: 'Capture a snapshot' }).click();
	await page.keyboard.press('c');
	await button.click({ force: true });

	// Nothing reached the server, and nothing claims to have been saved.
	await page.waitForTimeout(1000);
	expect(posts).toBe(0);
	await expect(page.getByTestId('capture-result')).toHaveCount(0);
});
