// Heat soak end to end in Chromium against the simulator at time scale 60 (a 60-minute preset
// lasts a minute). This spec runs its OWN bridge (on E2E_SOAK_BRIDGE_PORT) so it can restart it mid-run; the page
// is pointed at it with the `benchlight-bridge-url` override. It proves the no-loss claims:
// a reload mid-run loses nothing (stored count = what the bridge logged), a bridge restart is a
// marked gap, and a breach sounds the alarm, turns the generator off and aborts the run.
import { expect, test, type APIRequestContext, type Page } from '@playwright/test';
import { spawn, type ChildProcess } from 'node:child_process';
import { connect } from 'node:net';
import WebSocket from 'ws';
import { mintBridgeToken } from '../../src/lib/bridge/token';
import { signIn as signInAs } from './helpers';

const APP_ORIGIN = process.env.ORIGIN as string;
const BRIDGE_PORT = Number(process.env.E2E_SOAK_BRIDGE_PORT);
const BRIDGE_URL = `ws://127.0.0.1:${BRIDGE_PORT}`;

// ── our own bridge ──────────────────────────────────────────────────────────

let bridge: ChildProcess | null = null;

function portOpen(port: number): Promise<boolean> {
	return new Promise((resolve) => {
		const s = connect(port, '127.0.0.1');
		s.once('connect', () => {
			s.destroy();
			resolve(true);
		});
		s.once('error', () => resolve(false));
	});
}

async function waitForPort(port: number, open: boolean, timeoutMs = 30_000): Promise<void> {
	const until = Date.now() + timeoutMs;
	while (Date.now() < until) {
		if ((await portOpen(port)) === open) return;
		await new Promise((r) => setTimeout(r, 200));
	}
	throw new Error(`port ${port} did not ${open ? 'open' : 'close'} in time`);
}

async function startBridge(): Promise<void> {
	// Something else on the port would answer in the bridge's place: refuse rather than talk to it.
	if (await portOpen(BRIDGE_PORT))
		throw new Error(`port ${BRIDGE_PORT} is already taken; the soak spec needs it for its own bridge`);
	// Its own process group, so stopping it stops tsx and node beneath it.
	bridge = spawn(
		'npx',
		['tsx', 'bridge/main.ts', '--host', '127.0.0.1', '--port', String(BRIDGE_PORT), '--time-scale', '60'],
		{
			env: { ...process.env, BRIDGE_SECRET: process.env.BRIDGE_SECRET, BRIDGE_ALLOWED_ORIGINS: APP_ORIGIN },
			detached: true,
			stdio: 'ignore'
		}
	);
	let exited: string | null = null;
	bridge.once('exit', (code, signal) => (exited = `exit ${signal ?? code}`));
	await waitForPort(BRIDGE_PORT, true);
	if (exited) throw new Error(`the soak spec's bridge stopped at start (${exited})`);
}

async function stopBridge(): Promise<void> {
	const p = bridge;
	bridge = null;
	if (!p?.pid) return;
	try {
		process.kill(-p.pid, 'SIGTERM');
	} catch {
		/* already gone */
	}
	await waitForPort(BRIDGE_PORT, false);
}

interface BridgeView {
	bootId: string;
	generatorKind: string;
	readings: { probe: string; seq: number; t: number; celsius: number }[];
}

/** Ask the bridge (as a token-holding client) for its state and every reading after `afterSeq`. */
async function askBridge(afterSeq: number): Promise<BridgeView> {
	const { token } = await mintBridgeToken(
		process.env.BRIDGE_SECRET as string,
		{ userId: 'e2e-soak', role: 'technician' },
		60
	);
	const ws = new WebSocket(`${BRIDGE_URL}/stream?token=${encodeURIComponent(token)}`, { origin: APP_ORIGIN });
	return new Promise<BridgeView>((resolve, reject) => {
		const view: BridgeView = { bootId: '', generatorKind: '', readings: [] };
		const timer = setTimeout(() => {
			ws.terminate();
			reject(new Error('bridge did not answer'));
		}, 15_000);
		ws.on('error', reject);
		ws.on('message', (data, isBinary) => {
			if (isBinary) return;
			const m = JSON.parse(String(data));
			if (m.type === 'hello') {
				view.bootId = m.bootId;
				view.generatorKind = m.generator.kind;
				ws.send(JSON.stringify({ v: 1, type: 'temps-after', seq: afterSeq, id: 'e2e' }));
			} else if (m.type === 'temps' && m.backfill) {
				view.readings.push(...m.readings);
				if (m.complete) {
					clearTimeout(timer);
					ws.close();
					resolve(view);
				}
			}
		});
	});
}

/** Change the bridge simulator's settings (a fault on or off) as a token-holding client. */
async function patchSimulator(patch: Record<string, unknown>): Promise<void> {
	const { token } = await mintBridgeToken(
		process.env.BRIDGE_SECRET as string,
		{ userId: 'e2e-soak-sim', role: 'technician' },
		60
	);
	const ws = new WebSocket(`${BRIDGE_URL}/stream?token=${encodeURIComponent(token)}`, { origin: APP_ORIGIN });
	await new Promise<void>((resolve, reject) => {
		const timer = setTimeout(() => {
			ws.terminate();
			reject(new Error('bridge did not take the simulator patch'));
		}, 15_000);
		ws.on('error', reject);
		ws.on('message', (data, isBinary) => {
			if (isBinary) return;
			const m = JSON.parse(String(data));
			if (m.type === 'hello') ws.send(JSON.stringify({ v: 1, type: 'sim', id: 'e2e-sim', ...patch }));
			else if (m.type === 'error' && m.replyTo === 'e2e-sim') {
				clearTimeout(timer);
				ws.close();
				reject(new Error(`bridge refused the patch: ${m.message}`));
			} else if (m.type === 'state' && m.replyTo === 'e2e-sim') {
				clearTimeout(timer);
				ws.close();
				resolve();
			}
		});
	});
}

// ── app helpers ─────────────────────────────────────────────────────────────

async function signIn(page: Page, email: string): Promise<void> {
	await signInAs(page, email);
	await page.evaluate((url) => localStorage.setItem('benchlight-bridge-url', url), BRIDGE_URL);
}

/** A fresh job with a rating, so each case has its own soak history. */
async function newRatedJob(
	request: APIRequestContext,
	model: string,
	ratedPowerW = 100,
	year?: number,
	extra: Record<string, unknown> = {}
): Promise<number> {
	const res = await request.post('/api/jobs', {
		headers: { origin: APP_ORIGIN },
		data: {
			customerName: 'Soak Test Customer',
			category: 'integrated-amplifier',
			make: 'Thermora',
			model,
			complaint: 'Shuts down after an hour of playing',
			ratedPowerW,
			ratedLoadOhms: 8,
			...(year ? { year } : {}),
			...extra
		}
	});
	expect(res.status(), await res.text()).toBe(201);
	return ((await res.json()) as { id: number }).id;
}

interface RunDetail {
	run: {
		id: number;
		status: string;
		startSeq: number | null;
		startedAt: number;
		durationS: number;
		timeScale: number;
		abortReason: string | null;
		probes: string[];
	};
	readingCount: number;
	lastSeq: number | null;
	verdict: string | null;
	summary: { gaps: { reason: string }[]; incomplete: boolean; breaches: { kind: string }[] };
	events: { kind: string; detail: Record<string, unknown> }[];
}

async function runDetail(request: APIRequestContext, runId: number): Promise<RunDetail> {
	const res = await request.get(`/api/soak-runs/${runId}`);
	expect(res.ok()).toBe(true);
	return (await res.json()) as RunDetail;
}

async function openSoak(page: Page, jobId: number): Promise<void> {
	await page.goto(`/jobs/${jobId}/soak`);
	await expect(page.getByTestId('soak-bridge')).toHaveAttribute('data-status', 'connected');
}

async function startRun(
	page: Page,
	limits: { maxHeatsinkC?: number; maxRiseCPerMin?: number } = {}
): Promise<number> {
	// The simulator's heatsinks warm about 4.6 °C per soak-minute at first at ⅛ power (a 1 K/W,
	// 8-minute model): above the shop's 3 °C/min default, so the cases that must not breach allow 10.
	await page.getByTestId('limit-max-rise').fill(String(limits.maxRiseCPerMin ?? 10));
	if (limits.maxHeatsinkC !== undefined)
		await page.getByTestId('limit-max-heatsink').fill(String(limits.maxHeatsinkC));
	await page.getByTestId('soak-start').click();
	const run = page.getByTestId('soak-run');
	await expect(run).toHaveAttribute('data-phase', 'running');
	return Number(await run.getAttribute('data-run-id'));
}

async function storedCount(page: Page): Promise<number> {
	return Number(await page.getByTestId('soak-stored').innerText());
}

test.describe.configure({ mode: 'serial' });

test.beforeAll(async () => {
	await startBridge();
});
test.afterAll(async () => {
	await stopBridge();
});

test('a one-eighth-power soak survives a reload, finishes, and stores every reading the bridge logged', async ({
	page
}) => {
	test.setTimeout(150_000);
	await signIn(page, 'tech2@example.com');
	const jobId = await newRatedJob(page.request, `SK-RELOAD-${Date.now().toString(36)}`);
	await openSoak(page, jobId);

	// The drive is shown before the start: ⅛ of 100 W into 8 Ω = 12.5 W = √(12.5 × 8) = 10 V rms.
	await expect(page.getByTestId('soak-drive-vrms')).toHaveText('10.00 V rms');
	await expect(page.getByTestId('soak-drive-watts')).toHaveText('12.50 W');
	const runId = await startRun(page);

	// The bridge drives the unit: the generator is on and the output reaches the target power.
	await expect(page.getByTestId('soak-generator')).toHaveAttribute('data-kind', 'sine');
	await expect.poll(() => storedCount(page), { timeout: 30_000 }).toBeGreaterThanOrEqual(40);

	// Reload mid-run: the page resumes the same run and keeps recording.
	await page.reload();
	const run = page.getByTestId('soak-run');
	await expect(run).toHaveAttribute('data-run-id', String(runId));
	await expect(run).toHaveAttribute('data-phase', 'running');
	const afterReload = await storedCount(page);
	await expect.poll(() => storedCount(page), { timeout: 15_000 }).toBeGreaterThan(afterReload);

	// It finishes by itself at its duration, generator off, with the server's verdict.
	await expect(run).toHaveAttribute('data-phase', 'ended', { timeout: 90_000 });
	await expect(run).toHaveAttribute('data-status', 'passed');
	await expect(page.getByTestId('soak-verdict')).toHaveAttribute('data-verdict', 'passed');
	// A pass is a shop burn-in at the rule's preconditioning level, never a claim of compliance.
	await expect(page.getByTestId('soak-verdict-meaning')).toContainText('does not show compliance');
	await expect(page.getByTestId('soak-generator')).toHaveAttribute('data-kind', 'off');

	// No loss: every reading the bridge logged from the start to the last stored one is stored.
	const d = await runDetail(page.request, runId);
	expect(d.run.status).toBe('passed');
	expect(d.summary.incomplete).toBe(false);
	expect(d.run.startSeq).not.toBeNull();
	const bridgeView = await askBridge(d.run.startSeq as number);
	const produced = bridgeView.readings.filter((r) => r.seq <= (d.lastSeq as number));
	expect(d.readingCount).toBe(produced.length);
	// …and those readings cover the whole planned hour of soak time.
	const plannedEndMs = d.run.startedAt + (d.run.durationS * 1000) / d.run.timeScale;
	expect(Math.max(...produced.map((r) => r.t))).toBeGreaterThanOrEqual(plannedEndMs - 3000);
	expect(d.readingCount).toBeGreaterThanOrEqual(4 * 58); // four probes, about one reading each per soak-minute

	// The job page lists it with its verdict.
	await page.goto(`/jobs/${jobId}`);
	const item = page.getByTestId('soak-run-item').first();
	await expect(item).toHaveAttribute('data-verdict', 'passed');
	// A readable thumbnail (one line per probe) and the counts from the stored summary.
	await expect(item.getByTestId('soak-run-thumb').locator('path')).toHaveCount(d.run.probes.length);
	await expect(item.getByTestId('soak-run-counts')).toContainText(
		`${d.readingCount.toLocaleString('en')} readings`
	);
	await expect(item).toContainText('Heatsink L');
	await expect(item).not.toContainText('heatsink-left');
});

test('a bridge restart mid-run shows as a marked gap, not as lost data', async ({ page }) => {
	test.setTimeout(90_000);
	await signIn(page, 'tech2@example.com');
	const jobId = await newRatedJob(page.request, `SK-RESTART-${Date.now().toString(36)}`);
	await openSoak(page, jobId);
	const runId = await startRun(page);
	await expect.poll(() => storedCount(page), { timeout: 20_000 }).toBeGreaterThanOrEqual(20);
	const before = await askBridge(0);

	await stopBridge();
	await startBridge();

	// The page reconnects, marks the restart as a gap, drives the new bridge again and records on.
	await expect(page.getByTestId('soak-gaps')).toContainText('Bridge restarted', { timeout: 30_000 });
	await expect(page.getByTestId('soak-chart')).toHaveAttribute('data-gaps', '1');
	await expect(page.getByTestId('soak-generator')).toHaveAttribute('data-kind', 'sine', { timeout: 15_000 });
	const afterRestart = await storedCount(page);
	await expect.poll(() => storedCount(page), { timeout: 15_000 }).toBeGreaterThan(afterRestart);

	page.once('dialog', (dialog) => void dialog.accept());
	await page.getByTestId('soak-stop').click();
	await expect(page.getByTestId('soak-run')).toHaveAttribute('data-phase', 'ended', { timeout: 30_000 });

	const d = await runDetail(page.request, runId);
	expect(d.run.status).toBe('aborted');
	expect(d.summary.gaps.map((g) => g.reason)).toEqual(['bridge-restart']);
	expect(d.events.some((e) => e.kind === 'gap' && e.detail.reason === 'bridge-restart')).toBe(true);
	// Readings from both boots were stored: the new boot's history, up to the abort, is all there.
	const after = await askBridge(0);
	expect(after.bootId).not.toBe(before.bootId);
	const stored = await page.request.get(`/api/soak-runs/${runId}/readings?after=-1&limit=20000`);
	const seqs = new Set(((await stored.json()) as { readings: { seq: number }[] }).readings.map((r) => r.seq));
	const newBootStart = Math.min(...after.readings.map((r) => r.seq));
	const lastStored = Math.max(...seqs);
	const newBootProduced = after.readings.filter((r) => r.seq >= newBootStart && r.seq <= lastStored);
	expect(newBootProduced.length).toBeGreaterThan(0);
	expect(newBootProduced.every((r) => seqs.has(r.seq))).toBe(true);
});

test('a breach sounds the alarm, turns the generator off and fails the run with the breach as the reason', async ({
	page
}) => {
	test.setTimeout(90_000);
	await signIn(page, 'tech2@example.com');
	const jobId = await newRatedJob(page.request, `SK-BREACH-${Date.now().toString(36)}`);
	await openSoak(page, jobId);
	// A heatsink limit just above idle: driven at ⅛ power the simulator crosses it within minutes.
	const idleC = Number(
		(await askBridge(0)).readings.filter((r) => r.probe === 'heatsink-left').at(-1)?.celsius ?? 25
	);
	const runId = await startRun(page, { maxHeatsinkC: Math.ceil(idleC + 4) });

	const alarm = page.getByTestId('soak-alarm');
	await expect(alarm).toBeVisible({ timeout: 45_000 });
	// Probe names as a person reads them, never the id.
	await expect(page.getByTestId('soak-alarm-message')).toContainText(/Heatsink [LR]/);
	await expect(page.getByTestId('soak-alarm-message')).not.toContainText('heatsink-');
	// Audible: the WebAudio alarm is sounding (Chromium runs with autoplay allowed here).
	await expect(alarm).toHaveAttribute('data-sound', 'on');
	await expect(page.getByTestId('soak-alarm-generator')).toHaveText('off', { timeout: 10_000 });
	// A limit breach is a failed run, not an aborted one: aborted is a technician's stop.
	await expect(page.getByTestId('soak-run')).toHaveAttribute('data-status', 'failed', { timeout: 20_000 });

	// The bridge itself reports the generator off.
	expect((await askBridge(0)).generatorKind).toBe('off');
	const d = await runDetail(page.request, runId);
	expect(d.run.status).toBe('failed');
	expect(d.run.abortReason).toMatch(/^Limit breached: Heatsink [LR] reached/);
	expect(d.events.map((e) => e.kind)).toEqual(expect.arrayContaining(['breach', 'abort']));
	expect(d.summary.breaches[0]?.kind).toBe('max-heatsink');
});

test('an output dropout (the protection relay opening) fails the run with that reason', async ({ page }) => {
	test.setTimeout(90_000);
	await signIn(page, 'tech2@example.com');
	const jobId = await newRatedJob(page.request, `SK-DROP-${Date.now().toString(36)}`);
	await openSoak(page, jobId);
	const runId = await startRun(page);
	// Driven and on target before the fault: the output is at its level, readings are going up.
	await expect(page.getByTestId('soak-generator')).toHaveAttribute('data-kind', 'sine', { timeout: 15_000 });
	await expect.poll(() => storedCount(page), { timeout: 30_000 }).toBeGreaterThanOrEqual(12);
	try {
		// The relay opens at once: the output falls to the analyzer's floor (more than 80 dB down).
		await patchSimulator({ faults: { protectionRelay: { enabled: true, tripAfterS: 0 } } });
		await expect(page.getByTestId('soak-run')).toHaveAttribute('data-status', 'failed', { timeout: 30_000 });
	} finally {
		await patchSimulator({ faults: { protectionRelay: { enabled: false } } });
	}
	const d = await runDetail(page.request, runId);
	expect(d.run.status).toBe('failed');
	expect(d.run.abortReason).toMatch(/^Limit breached: (Left|Right) channel output fell \d+ dB within 2 s/);
	expect(d.events.some((e) => e.kind === 'breach' && e.detail.kind === 'output-dropout')).toBe(true);
});

test('one-third power on a unit made before 1974 waits for the caution to be confirmed', async ({ page }) => {
	await signIn(page, 'tech2@example.com');
	const jobId = await newRatedJob(page.request, `SK-OLD-${Date.now().toString(36)}`, 60, 1971);
	await openSoak(page, jobId);
	await page.getByTestId('preset-third-power-60').check({ force: true });
	await expect(page.getByTestId('preset-caution')).toContainText(
		'worst-case heat of a class-AB output stage'
	);
	await expect(page.getByTestId('soak-start')).toBeDisabled();
	await page.getByTestId('preset-confirm-heat').check();
	await expect(page.getByTestId('soak-start')).toBeEnabled();
	// The preset never reads as a rating test.
	await expect(page.getByTestId('preset-meaning-third-power-60')).toContainText('not a power-rating test');
});

test('a music-power rating holds the presets until the job is corrected, and an unrestored unit asks first', async ({
	page
}) => {
	await signIn(page, 'tech2@example.com');
	const jobId = await newRatedJob(page.request, `SK-MUSIC-${Date.now().toString(36)}`, 120, undefined, {
		ratedPowerBasis: 'music'
	});
	await openSoak(page, jobId);
	await expect(page.getByTestId('soak-basis-problem')).toContainText('music-power');
	await expect(page.getByTestId('soak-start')).toBeDisabled();

	// Corrected on the job page: continuous per channel at 0.1 % THD, and marked unrestored.
	await page.goto(`/jobs/${jobId}`);
	await expect(page.getByTestId('rating-problem')).toBeVisible();
	const form = page.getByTestId('rating-form');
	await form.getByLabel('Rated power').fill('45');
	await form.getByLabel('Power means').selectOption('continuous-per-channel');
	await form.getByLabel('At THD').fill('0.1');
	await page.getByTestId('rating-unrestored').check();
	await form.getByRole('button', { name: 'Save rating' }).click();
	await expect(page.getByTestId('rating-basis')).toContainText('Continuous per channel');
	await expect(page.getByTestId('rating-problem')).toHaveCount(0);
	await expect(page.getByTestId('unrestored')).toBeVisible();

	await openSoak(page, jobId);
	await expect(page.getByTestId('soak-basis-problem')).toHaveCount(0);
	await page.getByTestId('preset-third-power-60').check({ force: true });
	await expect(page.getByTestId('soak-start')).toBeDisabled();
	await expect(page.getByTestId('preset-caution')).toContainText('marked unrestored');
	await page.getByTestId('preset-confirm-heat').check();
	await expect(page.getByTestId('soak-start')).toBeEnabled();
});
