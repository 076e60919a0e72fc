// The app's blob store (beside its database file) and the analysis pool as a plain function, for
// routes. Services take the store and the analyser as parameters so tests pass their own.
import { db } from './db';
import { blobStoreFor, type BlobStore } from './storage';
import { analysisPool } from './analysis-pool';
import type { SnapshotAnalysisOutput, SnapshotAnalysisRequest } from './snapshot-analysis';

export function appStore(): BlobStore {
	return blobStoreFor(db.$client.name);
}

/** Measure a WAV on the analysis pool (503 with Retry-After when it is full). */
export async function analyseInPool(request: SnapshotAnalysisRequest): Promise<SnapshotAnalysisOutput> {
	const reservation = analysisPool().reserve();
	try {
		return await reservation.run(request);
	} finally {
		reservation.release();
	}
}
