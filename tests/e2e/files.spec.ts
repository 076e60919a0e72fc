// Job files end to end in Chromium: two photos and a WAV picked at once upload side by side with
// their progress bars, then show as thumbnails and measured figures; the WAV becomes a snapshot;
// a renamed text file is refused with 415 and an oversized file with 413, each saying why.
import { expect, test, type Page } from '@playwright/test';
import sharp from 'sharp';
import { ready, signIn } from './helpers';

async function photo(w: number, h: number, shade: number): Promise<Buffer> {
	return sharp({ create: { width: w, height: h, channels: 3, background: { r: shade, g: 90, b: 40 } } })
		.jpeg()
		.toBuffer();
}

/** 2 s of a 1 kHz sine at half of full scale, 16-bit stereo PCM WAV (Microsoft RIFF layout). */
function wav(): Buffer {
	const rate = 48_000;
	const n = rate * 2;
	const buf = Buffer.alloc(44 + n * 4);
	buf.write('RIFF', 0, 'latin1');
	buf.writeUInt32LE(36 + n * 4, 4);
	buf.write('WAVEfmt ', 8, 'latin1');
	buf.writeUInt32LE(16, 16);
	buf.writeUInt16LE(1, 20);
	buf.writeUInt16LE(2, 22);
	buf.writeUInt32LE(rate, 24);
	buf.writeUInt32LE(rate * 4, 28);
	buf.writeUInt16LE(4, 32);
	buf.writeUInt16LE(16, 34);
	buf.write('data', 36, 'latin1');
	buf.writeUInt32LE(n * 4, 40);
	for (let i = 0; i < n; i++) {
		const v = Math.round(0.5 * 32767 * Math.sin((2 * Math.PI * 1000 * i) / rate));
		buf.writeInt16LE(v, 44 + i * 4);
		buf.writeInt16LE(v, 46 + i * 4);
	}
	return buf;
}

async function newJob(page: Page, baseURL: string): Promise<number> {
	const res = await page.request.post('/api/jobs', {
		headers: { origin: baseURL },
		data: {
			customerName: 'Perrin Lask',
			category: 'integrated-amplifier',
			make: 'Corvane',
			model: `IA-${Date.now().toString(36)}`,
			complaint: 'Crackles on the left channel'
		}
	});
	expect(res.status()).toBe(201);
	return ((await res.json()) as { id: number }).id;
}

test('two photos and a WAV at once: progress, thumbnails, figures, and the WAV becomes a snapshot', async ({
	page,
	baseURL
}) => {
	await signIn(page, 'tech1@example.com');
	const jobId = await newJob(page, baseURL!);
	await page.goto(`/jobs/${jobId}`);
	await ready(page);

	// Hold the uploads at the server's door until every progress bar has been seen.
	let release!: () => void;
	const gate = new Promise<void>((r) => (release = r));
	await page.route(`**/api/jobs/${jobId}/files`, async (route) => {
		await gate;
		await route.continue();
	});
	await page.getByTestId('file-input').setInputFiles([
		{ name: 'front panel.jpg', mimeType: 'image/jpeg', buffer: await photo(900, 600, 200) },
		{ name: 'output stage.jpg', mimeType: 'image/jpeg', buffer: await photo(600, 900, 60) },
		{ name: 'left channel.wav', mimeType: 'audio/wav', buffer: wav() }
	]);
	await expect(page.getByTestId('upload-item')).toHaveCount(3);
	await expect(page.getByTestId('upload-progress')).toHaveCount(3);
	await expect(page.getByTestId('upload-item').first().getByRole('button', { name: 'Cancel' })).toBeVisible();
	release();

	await expect(page.getByTestId('thumb')).toHaveCount(2);
	// The thumbnails are real images the server made (decoded by the browser).
	await expect
		.poll(() =>
			page
				.getByTestId('thumb')
				.evaluateAll((imgs) => Math.max(...imgs.map((img) => (img as HTMLImageElement).naturalWidth)))
		)
		// The wider photo's thumbnail is 320 px across (a portrait one is narrower); upload order varies.
		.toBe(320);
	const figures = page.getByTestId('wav-figures');
	await expect(figures).toContainText('1000.0 Hz');
	// −6.02 dBFS: a sine peaking at half of full scale (AES17 dBFS).
	await expect(figures).toContainText('-6.02 dBFS');
	await expect(page.getByTestId('uploads')).toHaveCount(0);

	// The full-size viewer.
	await page.getByRole('button', { name: 'View front panel.jpg' }).click();
	const viewer = page.getByTestId('photo-viewer');
	await expect(viewer).toBeVisible();
	await expect
		.poll(() => viewer.getByRole('img').evaluate((img: HTMLImageElement) => img.naturalWidth))
		.toBe(900);
	await viewer.getByRole('button', { name: 'Close' }).click();

	// WAV → snapshot, through the bench capture's server path.
	await page.getByTestId('make-snapshot').click();
	const form = page.getByTestId('snapshot-form');
	await form.getByLabel('Label').fill('Left channel from file');
	await form.getByLabel('Stage').selectOption('before');
	await form.getByRole('button', { name: 'Make snapshot' }).click();
	await expect(page.getByTestId('file-snapshot-link')).toBeVisible();
	await expect(page.getByText('Left channel from file').first()).toBeVisible();

	// One steady tone is no stepped sweep: the analysis pool's answer says what a sweep needs.
	await page.getByTestId('read-sweep').click();
	await expect(page.getByRole('alert').filter({ hasText: 'two or more tones' })).toBeVisible();
});

test('a renamed text file is refused with 415, a cancelled upload attaches nothing, an oversized file is refused with 413', async ({
	page,
	baseURL
}) => {
	await signIn(page, 'tech1@example.com');
	const jobId = await newJob(page, baseURL!);
	await page.goto(`/jobs/${jobId}`);
	await ready(page);

	await page.getByTestId('file-input').setInputFiles([
		{
			name: 'amp.jpg',
			mimeType: 'image/jpeg',
			buffer: Buffer.from('Not a photo: bias set to 25 mA.\n'.repeat(40))
		}
	]);
	const message = page.getByTestId('upload-message');
	await expect(message).toContainText('amp.jpg is not a recognised file type');
	await expect(message).toContainText('JPEG, PNG or WebP photos, PDF documents and WAV captures');
	await expect(page.getByTestId('thumb')).toHaveCount(0);

	// Cancel: held at the server's door, the upload is stopped and nothing is attached.
	let release!: () => void;
	const gate = new Promise<void>((r) => (release = r));
	await page.route(`**/api/jobs/${jobId}/files`, async (route) => {
		await gate;
		await route.continue().catch(() => {}); // the browser already dropped it
	});
	await page.getByRole('button', { name: 'Dismiss' }).click();
	await page
		.getByTestId('file-input')
		.setInputFiles([{ name: 'bench top.jpg', mimeType: 'image/jpeg', buffer: await photo(400, 300, 120) }]);
	await page.getByTestId('upload-item').getByRole('button', { name: 'Cancel' }).click();
	await expect(page.getByTestId('upload-message')).toHaveText('Cancelled');
	release();
	await page.unroute(`**/api/jobs/${jobId}/files`);
	await page.reload();
	await ready(page);
	await expect(page.getByTestId('job-files')).toContainText('No files yet.');

	// One byte over the default 50 MiB per-file limit.
	const big = Buffer.alloc(50 * 1024 * 1024 + 1, 0x20);
	const res = await page.request.post(`/api/jobs/${jobId}/files`, {
		headers: { origin: baseURL! },
		multipart: { file: { name: 'scan.pdf', mimeType: 'application/pdf', buffer: big } }
	});
	expect(res.status()).toBe(413);
	const body = (await res.json()) as { message: string };
	expect(body.message).toContain('scan.pdf is 50.0 MiB, over the 50 MiB limit');
	expect(body.message).toContain("the shop's per-file limit");
});
