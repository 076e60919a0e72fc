// Compare end to end in Chromium: a supervisor's job gets a distorting "before" and a clean "after"
// capture (generated WAVs uploaded through the snapshot API, judged by the server against a seeded
// profile), picks both on the job page, and the compare page overlays their spectra, shows the
// THD+N change in words, the flipped check and the load that differs; the snapshot page reads the
// record with its audio hash; another job's snapshot is refused; the page fits 390 px.
import { expect, test, type APIRequestContext } from '@playwright/test';
import { encodeWav } from '../../src/lib/dsp/wav';
import { ready, signIn } from './helpers';

/**
 * A 1 kHz tone at `amp` of full scale plus `h3` (re the fundamental) of third harmonic, over a
 * deterministic uniform noise floor of ±1e-5 full scale (about −105 dBFS rms), like a real bench.
 */
function tone(amp: number, h3: number, seed: number, n = 32768, rate = 48000): Float32Array {
	const out = new Float32Array(n);
	let x = seed >>> 0;
	for (let i = 0; i < n; i++) {
		x = (Math.imul(x, 1664525) + 1013904223) >>> 0;
		const noise = (x / 2 ** 32 - 0.5) * 2e-5;
		const w = (2 * Math.PI * 1000 * i) / rate;
		out[i] = amp * (Math.sin(w) + h3 * Math.sin(3 * w)) + noise;
	}
	return out;
}

async function upload(
	request: APIRequestContext,
	origin: string,
	jobId: number,
	meta: Record<string, unknown>,
	h3: number
): Promise<number> {
	const wav = encodeWav([tone(0.25, h3, 1), tone(0.25, h3, 2)], 48000);
	const res = await request.post(`/api/jobs/${jobId}/snapshots`, {
		headers: { origin },
		multipart: {
			samples: { name: 'capture.wav', mimeType: 'audio/wav', buffer: Buffer.from(wav) },
			meta: JSON.stringify(meta)
		}
	});
	expect(res.status(), await res.text()).toBe(201);
	return ((await res.json()) as { id: number }).id;
}

test('compare: before vs after overlaid, changes in words, a flipped check, differing load', async ({
	page,
	baseURL
}) => {
	await signIn(page, 'supervisor@example.com');
	const origin = baseURL!;

	// A fresh job of our own, and a second one whose snapshot must be refused on the first's page.
	const newJob = async (model: string) => {
		const res = await page.request.post('/api/jobs', {
			headers: { origin, 'content-type': 'application/json' },
			data: {
				customerName: 'Comparo Customer',
				category: 'preamplifier',
				make: 'Velmora',
				model,
				complaint: 'Harsh treble'
			}
		});
		expect(res.status()).toBe(201);
		return ((await res.json()) as { id: number }).id;
	};
	const jobId = await newJob('VP-12');
	const otherJobId = await newJob('VP-13');

	const profiles = (await (await page.request.get('/api/limit-profiles')).json()) as {
		profiles: { id: number; name: string }[];
	};
	const profileId = profiles.profiles.find((p) => p.name === 'Line preamp output, 1 kHz')!.id;
	const common = { profileId, fullScaleVolts: 2, referenceVrms: 0.5, analysis: { fftSize: 32768 } };
	// 1 % third harmonic before (THD+N ≤ 0.05 % fails), none after (passes); the load differs.
	const beforeId = await upload(
		page.request,
		origin,
		jobId,
		{ ...common, label: 'As received', stage: 'before', loadOhms: 10_000 },
		0.01
	);
	const afterId = await upload(
		page.request,
		origin,
		jobId,
		{ ...common, label: 'After recap', stage: 'after', loadOhms: 600 },
		0
	);
	const foreignId = await upload(
		page.request,
		origin,
		otherJobId,
		{ ...common, label: 'Elsewhere', stage: 'before' },
		0
	);

	// A short soak run with a few heatsink readings, stopped by hand: it shows on the compare page.
	const runRes = await page.request.post(`/api/jobs/${jobId}/soak-runs`, {
		headers: { origin, 'content-type': 'application/json' },
		data: {
			preset: 'custom',
			custom: { watts: 1, loadOhms: 8, frequencyHz: 1000, durationS: 600, channels: ['left', 'right'] },
			probes: ['heatsink-left', 'heatsink-right']
		}
	});
	expect(runRes.status(), await runRes.text()).toBe(201);
	const runId = ((await runRes.json()) as { id: number }).id;
	const run = (await (await page.request.get(`/api/soak-runs/${runId}`)).json()) as {
		run: { id: number; startedAt: number };
	};
	const t0 = run.run.startedAt;
	const readings = [0, 1, 2, 3].flatMap((k) => [
		{ probe: 'heatsink-left', seq: 2 * k, t: t0 + k * 250, celsius: 30 + k },
		{ probe: 'heatsink-right', seq: 2 * k + 1, t: t0 + k * 250, celsius: 31 + k }
	]);
	const readRes = await page.request.post(`/api/soak-runs/${run.run.id}/readings`, {
		headers: { origin, 'content-type': 'application/json' },
		data: { readings }
	});
	expect(readRes.status(), await readRes.text()).toBe(200);
	await expect.poll(() => Date.now() - t0).toBeGreaterThan(1000);
	const abortRes = await page.request.post(`/api/soak-runs/${run.run.id}/abort`, {
		headers: { origin, 'content-type': 'application/json' },
		data: { reason: 'Stopped to re-seat a probe' }
	});
	expect(abortRes.status(), await abortRes.text()).toBe(200);

	// ── pick both on the job page ─────────────────────────────────────────────
	await page.goto(`/jobs/${jobId}`);
	await ready(page);
	await expect(page.getByTestId('snapshot-row')).toHaveCount(2);
	await expect(page.getByTestId('compare-before-after')).toBeVisible();
	for (const id of [beforeId, afterId])
		await page
			.locator(`[data-testid="snapshot-row"][data-snapshot-id="${id}"] [data-testid="snapshot-pick"]`)
			.check();
	await page.getByTestId('compare-selected').click();
	await expect(page).toHaveURL(
		new RegExp(`/jobs/${jobId}/compare\\?s=(${beforeId},${afterId}|${afterId},${beforeId})$`)
	);
	await ready(page);

	// ── overlaid spectra: a canvas, and a legend entry per snapshot and channel ─
	const chart = page.getByTestId('spectrum-chart');
	await expect(chart.locator('canvas')).toHaveCount(1);
	await expect(chart).toHaveAttribute('data-series', '4');
	// uPlot's legend: the x row plus one row per trace.
	await expect(chart.locator('.u-legend .u-series')).toHaveCount(5);
	await expect(chart.locator('.u-legend')).toContainText(`#${beforeId} As received · L`);
	await expect(chart.locator('.u-legend')).toContainText(`#${afterId} After recap · R`);
	await expect(chart.locator('[role="img"]')).toHaveAttribute(
		'aria-label',
		/Spectra of 2 snapshots overlaid/
	);

	// ── the figure table: THD+N fell, in % points and in words ────────────────
	const thdn = page.locator('[data-testid="compare-row"][data-row="ch0:thdnPercent"]');
	const change = thdn.getByTestId('compare-change');
	await expect(change).toHaveAttribute('data-verdict', 'better');
	await expect(change).toContainText('% points');
	await expect(change).toContainText('better');
	// About 1 % before (the third harmonic is 1 % of the fundamental): the change reads −0.99…
	await expect(change).toContainText(/−0\.99\d* % points/);
	const thdDb = page
		.locator('[data-testid="compare-row"][data-row="ch0:thdDb"]')
		.getByTestId('compare-change');
	// 20·lg of the THD ratio: from −40 dB down to the noise floor's harmonic bins: "better".
	await expect(thdDb).toContainText('better');

	// ── the flipped check and the differing load ──────────────────────────────
	const flipped = page.getByTestId('flipped-check');
	await expect(flipped.first()).toContainText('fail → pass');
	await expect(page.getByTestId('flipped-checks')).toContainText('THD+N (left) ≤ 0.05 %');
	await expect(page.getByTestId('conditions-differ')).toContainText('load');
	// Power into 600 Ω against 10 kΩ: the change is shown but not judged.
	const power = page
		.locator('[data-testid="compare-row"][data-row="ch0:powerW"]')
		.getByTestId('compare-change');
	await expect(power).toHaveAttribute('data-verdict', 'not comparable');
	await expect(power).toContainText('measured into another load');
	await expect(page.locator('[data-condition="load"]')).toHaveAttribute('data-differs', 'true');
	await expect(page.locator('[data-condition="band"]')).toHaveAttribute('data-differs', 'false');

	// ── the soak run on the temperature chart, its verdict in words ───────────
	const soak = page.getByTestId('compare-soak');
	await expect(soak.locator('canvas')).toHaveCount(1);
	await expect(soak).toHaveAttribute('data-series', '2');
	await expect(soak.getByTestId('compare-soak-run')).toContainText('Aborted');
	await expect(soak.getByTestId('compare-soak-run')).toContainText('max L 33.0 °C');

	// ── 390 px wide: the table scrolls in its own box, never the page ────────
	await page.setViewportSize({ width: 390, height: 800 });
	await expect.poll(() => page.evaluate(() => document.documentElement.scrollWidth)).toBeLessThanOrEqual(390);
	const box = page.getByTestId('compare-table-box');
	expect(await box.evaluate((el) => el.scrollWidth > el.clientWidth)).toBe(true);
	await page.setViewportSize({ width: 1280, height: 900 });

	// ── another job's snapshot is refused; more than six too ──────────────────
	const foreign = await page.request.get(`/api/jobs/${jobId}/compare?s=${beforeId},${foreignId}`);
	expect(foreign.status()).toBe(400);
	expect(((await foreign.json()) as { message: string }).message).toContain(`not part of job ${jobId}`);
	const pageRes = await page.goto(`/jobs/${jobId}/compare?s=${beforeId},${foreignId}`);
	expect(pageRes?.status()).toBe(400);
	const seven = await page.goto(`/jobs/${jobId}/compare?s=1,2,3,4,5,6,7`);
	expect(seven?.status()).toBe(400);

	// ── the snapshot page: readable record with its audio hash ────────────────
	const api = (await (await page.request.get(`/api/snapshots/${beforeId}`)).json()) as {
		audioSha256: string;
	};
	await page.goto(`/jobs/${jobId}`);
	await ready(page);
	await page
		.locator(`[data-testid="snapshot-row"][data-snapshot-id="${beforeId}"]`)
		.getByTestId('snapshot-details')
		.click();
	await expect(page).toHaveURL(new RegExp(`/snapshots/${beforeId}$`));
	await expect(page.getByTestId('snapshot-title')).toHaveText('As received');
	await expect(page.getByTestId('snapshot-sha256')).toHaveText(api.audioSha256);
	await expect(page.getByTestId('snapshot-detail-verdict')).toHaveText('Fail');
	await expect(page.getByTestId('snapshot-conditions')).toContainText('10000 Ω');
	await expect(page.getByTestId('snapshot-checks')).toContainText('THD+N (left) ≤ 0.05 %');
	await expect(page.getByTestId('snapshot-harmonics')).toContainText('H3');
	await expect(page.getByTestId('spectrum-chart').locator('canvas')).toHaveCount(1);
	await page.setViewportSize({ width: 390, height: 800 });
	await expect.poll(() => page.evaluate(() => document.documentElement.scrollWidth)).toBeLessThanOrEqual(390);
});
