// Benchmark: what attaching large files does to the request thread. Uploads a 24-megapixel JPEG
// (re-encoded without metadata, thumbnailed) and a 48 MiB PDF through the upload service, chunk
// by chunk as a request body arrives, and reports the thread's longest stall (event-loop delay,
// max) and time running code (event-loop utilisation) beside the wall time. sharp works on libuv's
// thread pool and blobs are hashed 1 MiB at a time, so the stall should stay near one piece's hash.
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { monitorEventLoopDelay, performance } from 'node:perf_hooks';
import sharp from 'sharp';
import { openDb } from '../../src/lib/server/db/open';
import * as table from '../../src/lib/server/db/schema';
import { uploadJobFiles } from '../../src/lib/server/job-files';
import { LocalDiskStore } from '../../src/lib/server/storage';
import { pdf } from '../../src/lib/server/file-fixtures';

async function bigJpeg(w: number, h: number): Promise<Buffer> {
	const raw = Buffer.alloc(w * h * 3);
	for (let i = 0; i < raw.length; i++) raw[i] = (i * 2654435761) >>> 24; // busy texture, poor compression
	return sharp(raw, { raw: { width: w, height: h, channels: 3 } })
		.withExif({ IFD0: { Make: 'Invented Camera Co' } })
		.jpeg({ quality: 90 })
		.toBuffer();
}

function bigPdf(bytes: number): Buffer {
	const head = pdf();
	const pad = Buffer.alloc(bytes - head.length, 0x20);
	// Padding inside a comment before the trailer still ends with %%EOF.
	return Buffer.concat([head.subarray(0, 9), Buffer.from('%'), pad, head.subarray(9)]);
}

export async function run(): Promise<void> {
	const dir = mkdtempSync(join(tmpdir(), 'bench-files-'));
	try {
		const db = openDb(':memory:');
		db.insert(table.users)
			.values({ id: 'u1', email: 't@example.com', name: 'T', role: 'technician', passwordHash: 'x' })
			.run();
		const c = db.insert(table.customers).values({ name: 'C' }).returning().get();
		const jobId = db
			.insert(table.jobs)
			.values({ customerId: c.id, category: 'receiver', make: 'M', model: 'X', complaint: 'c' })
			.returning()
			.get().id;
		const store = new LocalDiskStore(join(dir, 'store'));
		const cases = [
			{ name: '24 MP JPEG', file: 'photo.jpg', data: await bigJpeg(6000, 4000) },
			{ name: '48 MiB PDF', file: 'manual.pdf', data: bigPdf(48 * 1024 * 1024) }
		];
		for (const k of cases) {
			const boundary = 'bench-boundary';
			async function* body() {
				yield Buffer.from(
					`--${boundary}\r\nContent-Disposition: form-data; name="file"; filename="${k.file}"\r\n\r\n`
				);
				for (let at = 0; at < k.data.length; at += 64 * 1024) {
					yield k.data.subarray(at, at + 64 * 1024);
					await new Promise((r) => setImmediate(r)); // a socket delivers chunks between ticks
				}
				yield Buffer.from(`\r\n--${boundary}--\r\n`);
			}
			const delay = monitorEventLoopDelay({ resolution: 5 });
			const elu0 = performance.eventLoopUtilization();
			delay.enable();
			const t0 = performance.now();
			await uploadJobFiles(db, {
				jobId,
				userId: 'u1',
				body: body(),
				boundary,
				store,
				analyse: async () => {
					throw new Error('not used');
				}
			});
			const wallMs = performance.now() - t0;
			delay.disable();
			const elu = performance.eventLoopUtilization(elu0);
			console.log(
				`${k.name} (${(k.data.length / 1024 / 1024).toFixed(1)} MiB): ${wallMs.toFixed(0)} ms wall, ` +
					`longest stall ${(delay.max / 1e6).toFixed(1)} ms, thread busy ${(elu.utilization * 100).toFixed(0)} %`
			);
		}
	} finally {
		rmSync(dir, { recursive: true, force: true });
	}
}
