// Demo files on the busiest open demo jobs: two photos, a service-notes PDF and a WAV capture,
// attached through the same upload service the API uses (typed by content, photos stripped and
// thumbnailed, the WAV measured). All invented: drawn gradients, a one-page PDF, a synthetic tone.
import { and, desc, eq, notInArray, sql } from 'drizzle-orm';
import type { Db } from '../src/lib/server/db/open';
import * as table from '../src/lib/server/db/schema';
import { uploadJobFiles } from '../src/lib/server/job-files';
import { blobStoreFor } from '../src/lib/server/storage';
import { analyseSnapshotAudio } from '../src/lib/server/snapshot-analysis';
import { pdf, photo, wav16 } from '../src/lib/server/file-fixtures';

/** How many demo jobs get files. */
const JOBS_WITH_FILES = 3;

export async function seedFiles(db: Db, uploaderId: string): Promise<void> {
	const jobs = db
		.select({ id: table.jobs.id, n: sql<number>`count(${table.parts.id})` })
		.from(table.jobs)
		.leftJoin(table.parts, eq(table.parts.jobId, table.jobs.id))
		.where(and(notInArray(table.jobs.status, ['approved', 'returned'])))
		.groupBy(table.jobs.id)
		.orderBy(desc(sql`count(${table.parts.id})`), table.jobs.id)
		.limit(JOBS_WITH_FILES)
		.all();
	const boundary = 'benchlight-demo-files';
	const files = [
		{ name: 'front panel.jpg', data: await photo('jpeg', 960, 640, true) },
		{ name: 'output stage.png', data: await photo('png', 640, 480) },
		{ name: 'service notes.pdf', data: pdf() },
		{ name: 'idle hum, left.wav', data: wav16(2, 48_000, 1000, 0.4) }
	];
	for (const job of jobs) {
		async function* body() {
			for (const f of files) {
				yield Buffer.from(
					`--${boundary}\r\nContent-Disposition: form-data; name="file"; filename="${f.name}"\r\n\r\n`
				);
				yield f.data;
				yield Buffer.from('\r\n');
			}
			yield Buffer.from(`--${boundary}--\r\n`);
		}
		await uploadJobFiles(db, {
			jobId: job.id,
			userId: uploaderId,
			body: body(),
			boundary,
			store: blobStoreFor(db.$client.name),
			analyse: async (r) => analyseSnapshotAudio(r)
		});
	}
}
