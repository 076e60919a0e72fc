// Bench procedures against the bridge simulator: a third-octave response sweep saved with the
// server's verdict, and a maximum-power ramp that stops at the THD+N threshold and leaves the
// generator off. The simulator's output stage clips near its rails (invented, see bridge/sim).
import { expect, test } from '@playwright/test';
import { ready, signIn } from './helpers';

const APP_ORIGIN = `http://127.0.0.1:${process.env.E2E_PORTS?.split(',')[0]}`;

test('a response sweep and a power ramp run on the bench and are kept with the job', async ({ page }) => {
	test.setTimeout(150_000);
	await signIn(page, 'tech2@example.com');
	const res = await page.request.post('/api/jobs', {
		headers: { origin: APP_ORIGIN },
		data: {
			customerName: 'Procedure Test Customer',
			category: 'integrated-amplifier',
			make: 'Thermora',
			model: `PR-${Date.now().toString(36)}`,
			complaint: 'Dull treble',
			ratedPowerW: 80,
			ratedLoadOhms: 8,
			ratedPowerBasis: 'continuous-per-channel'
		}
	});
	expect(res.status(), await res.text()).toBe(201);
	const jobId = ((await res.json()) as { id: number }).id;
	await page.goto(`/jobs/${jobId}/bench`);
	await ready(page);
	await expect(page.getByTestId('link-state')).toHaveText(/^Connected$/, { timeout: 30_000 });

	// ── a third-octave sweep: 31 steps, progress shown, both channels plotted ──
	const panel = page.getByTestId('procedures');
	await panel.getByTestId('proc-label').fill('Tone controls flat');
	await panel.getByTestId('proc-level').fill('0.1');
	await panel.getByTestId('proc-start').click();
	await expect(panel.getByTestId('proc-progress')).toBeVisible();
	await expect(panel.getByTestId('proc-saved')).toBeVisible({ timeout: 90_000 });
	await expect(panel.getByTestId('proc-chart').locator('canvas')).toHaveCount(1);
	const list = await page.request.get(`/api/jobs/${jobId}/procedures?kind=response`);
	const sweep = (
		(await list.json()) as {
			procedures: { verdict: string; result: { relativeDb: (number | null)[][]; frequenciesHz: number[] } }[];
		}
	).procedures[0];
	expect(sweep.result.frequenciesHz).toHaveLength(31);
	// Every step read on both channels, and 1 kHz is the 0 dB reference.
	expect(sweep.result.relativeDb.flat().every((v) => v !== null)).toBe(true);
	expect(sweep.result.relativeDb[sweep.result.frequenciesHz.indexOf(1000)]).toEqual([0, 0]);
	await expect(panel.getByTestId('proc-saved')).toHaveAttribute('data-verdict', sweep.verdict);

	// ── a guarded power ramp: refused without the mains reading, then stops at 1 % and ends at zero ──
	await panel.getByTestId('proc-kind').selectOption('max-power');
	await panel.getByTestId('proc-label').fill('1 kHz into 8 Ω at 1 %');
	await panel.getByTestId('proc-level').fill('0.6');
	await panel.getByTestId('proc-caution').check();
	await panel.getByTestId('proc-start').click();
	await expect(panel.getByTestId('proc-message')).toContainText('mains voltage');
	await panel.getByTestId('proc-mains').fill('231');
	await panel.getByTestId('proc-start').click();
	await expect(panel.getByTestId('proc-saved')).toContainText(' W (', { timeout: 90_000 });
	await expect(page.getByTestId('gen-state')).toHaveText('output off', { timeout: 10_000 });
	const ramps = await page.request.get(`/api/jobs/${jobId}/procedures?kind=max-power`);
	const ramp = (
		(await ramps.json()) as {
			procedures: {
				verdict: string;
				result: { reason: string; crossings: { powerW: number; outputVrms: number }[] };
			}[];
		}
	).procedures[0];
	expect(ramp.result.reason).toBe('threshold');
	for (const c of ramp.result.crossings) {
		expect(c.powerW).toBeCloseTo(c.outputVrms ** 2 / 8, 6); // P = V²/R into 8 Ω
		// The simulator's ±42 V rails clip a little under 28 V rms: 1 % THD+N sits close below that.
		expect(c.outputVrms).toBeGreaterThan(20);
		expect(c.outputVrms).toBeLessThan(30);
	}

	// ── crosstalk: one side driven at a time, six steps, judged by the server against −40 dB ──
	await panel.getByTestId('proc-kind').selectOption('crosstalk');
	await panel.getByTestId('proc-label').fill('Line in, both directions');
	await panel.getByTestId('proc-level').fill('0.5');
	await panel.getByTestId('proc-xt-limit').fill('-40');
	await panel.getByTestId('proc-start').click();
	await expect(panel.getByTestId('proc-saved')).toHaveAttribute('data-verdict', 'pass', { timeout: 60_000 });
	await expect(panel.getByTestId('proc-xt-chart').locator('canvas')).toHaveCount(1);
	await expect(page.getByTestId('gen-state')).toHaveText('output off', { timeout: 10_000 });
	const xts = await page.request.get(`/api/jobs/${jobId}/procedures?kind=crosstalk`);
	const xt = ((await xts.json()) as { procedures: { result: { stepsDb: number[] } }[] }).procedures[0];
	// The simulator leaks −80 dB at 1 kHz rising 6 dB/octave (bridge/sim): every step well below −40 dB.
	expect(xt.result.stepsDb).toHaveLength(6);
	for (const d of xt.result.stepsDb) expect(d).toBeLessThan(-55);

	// ── the stability record: no analysis, the technician's observation, refused until one is chosen ──
	await panel.getByTestId('proc-kind').selectOption('stability');
	await panel.getByTestId('proc-label').fill('10 kHz square into 8 Ω ∥ 2 µF');
	await expect(panel).toContainText('cannot show ultrasonic oscillation');
	await panel.getByTestId('proc-start').click();
	await expect(panel.getByTestId('proc-message')).toContainText('what the scope showed');
	await panel.getByTestId('proc-stability-observed').getByText('Damped ringing').click();
	await panel.getByTestId('proc-start').click();
	await expect(panel.getByTestId('proc-saved')).toHaveAttribute('data-verdict', 'pass');

	// Every run is kept with the job, with the server's verdicts.
	await page.goto(`/jobs/${jobId}`);
	await ready(page);
	await expect(page.getByTestId('job-procedure')).toHaveCount(4);
	await expect(page.getByTestId('job-procedures')).toContainText('damped ringing into 8 Ω ∥ 2 µF');
	await expect(page.getByTestId('job-procedures')).toContainText(' W');
});
