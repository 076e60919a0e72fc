// Snapshot view types shared by the snapshot service (server) and the components that show them,
// so the list the API sends and the list the job page reads cannot drift apart.
import type { CompactSpectrum } from '$lib/dsp/spectrum';

export type SnapshotStageView = 'before' | 'after' | 'other';
/** The one name each stage has on screen; the stored values stay as they are. */
export const SNAPSHOT_STAGE_LABELS: Record<SnapshotStageView, string> = {
	before: 'Before',
	after: 'After',
	other: 'Other'
};
export type SnapshotVerdictView = 'pass' | 'fail' | 'none';

/** Headline figures of one channel, for lists. */
export interface SnapshotSummaryRow {
	channel: number;
	/** Null when the capture had no tone (no stimulus, no signal, two-tone stimuli). */
	frequencyHz: number | null;
	levelVrms: number;
	thdnPercent: number | null;
	weighting: string;
}

export interface SnapshotListItem {
	id: number;
	jobId: number;
	label: string;
	stage: SnapshotStageView;
	verdict: SnapshotVerdictView;
	profileName: string | null;
	createdAt: string;
	createdByName: string;
	sampleRateHz: number;
	channelCount: number;
	/** Headline figures per channel. */
	summary: SnapshotSummaryRow[];
	checksPassed: number;
	checksTotal: number;
	/** A small spectrum for thumbnails (≤ 240 points per channel, peaks kept). */
	thumbnail: CompactSpectrum[];
}
