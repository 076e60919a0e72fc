// Job files: the types the server accepts (decided by content, never by name) and the shapes the
// API answers with. Shared by the server and the job page (no server imports here).
import { z } from 'zod';
import { snapshotMetaSchema } from './snapshots';

/** Accepted file kinds, each with the media type it is served as. */
export const JOB_FILE_TYPES = {
	jpeg: 'image/jpeg',
	png: 'image/png',
	webp: 'image/webp',
	pdf: 'application/pdf',
	wav: 'audio/wav'
} as const;
export type JobFileType = keyof typeof JOB_FILE_TYPES;
export const JOB_FILE_TYPE_NAMES = Object.keys(JOB_FILE_TYPES) as [JobFileType, ...JobFileType[]];
export const PHOTO_TYPES: readonly JobFileType[] = ['jpeg', 'png', 'webp'];

/** How the accepted types read in a refusal. */
export const ACCEPTED_TYPES_TEXT = 'JPEG, PNG or WebP photos, PDF documents and WAV captures';

export const DEFAULT_FILE_MAX_MIB = 50;
/** Highest per-file limit an admin may set: the server's request body limit allows this and a little more. */
export const FILE_MAX_MIB_CEILING = 200;

export const jobFileLimitsSchema = z.object({
	maxFileMiB: z
		.number('The per-file limit is a number of MiB')
		.int('The per-file limit is a whole number of MiB')
		.min(1, 'The per-file limit is at least 1 MiB')
		.max(FILE_MAX_MIB_CEILING, `The per-file limit is at most ${FILE_MAX_MIB_CEILING} MiB`)
});
export type JobFileLimits = z.infer<typeof jobFileLimitsSchema>;
export const DEFAULT_JOB_FILE_LIMITS: JobFileLimits = { maxFileMiB: DEFAULT_FILE_MAX_MIB };

/** The figures of an uploaded WAV, per channel, measured with default conditions. */
export interface WavFigures {
	sampleRateHz: number;
	channelCount: number;
	durationS: number;
	bandHz: [number, number];
	/** Full scale taken as 1 V peak: levels are relative to the recording, not the bench. */
	fullScaleVolts: number;
	channels: {
		channel: number;
		frequencyHz: number | null;
		levelDbfs: number;
		thdnPercent: number | null;
		thdnDb: number | null;
		snrDb: number | null;
		signalReason: string | null;
	}[];
}

export interface JobFileView {
	id: number;
	jobId: number | null;
	/** Set instead of `jobId` for a model's document (the notebook): the `make/model` key. */
	modelKey?: string | null;
	name: string;
	type: JobFileType;
	mediaType: string;
	bytes: number;
	sha256: string;
	thumbSha256: string | null;
	uploadedBy: string;
	uploadedByName: string;
	uploadedAt: string;
	removedAt: string | null;
	snapshotId: number | null;
	analysis?: WavFigures;
	/** Why a WAV could not be measured (it is kept all the same). */
	analysisError?: string;
}

/** Turning an uploaded WAV into a snapshot: the same meta a bench capture sends. */
export const fileSnapshotSchema = snapshotMetaSchema;
