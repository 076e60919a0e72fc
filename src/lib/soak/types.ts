// Shapes of the soak API's answers, shared by the server and the browser.
import type { SoakChannel, SoakPresetId } from './presets';
import type { SoakLimits } from './soak-limits';
import type { SoakSummary } from './verdict';
import type { SeriesBucketRow, SoakSeries } from './series';

export type SoakStatus = 'running' | 'passed' | 'failed' | 'aborted';
export type SoakVerdict = 'passed' | 'failed' | 'aborted';

export interface SoakRunView {
	id: number;
	jobId: number;
	createdBy: string;
	createdByName: string | null;
	preset: SoakPresetId;
	presetLabel: string;
	frequencyHz: number;
	loadOhms: number;
	drivePowerW: number;
	driveVrms: number;
	durationS: number;
	channels: SoakChannel[];
	probes: string[];
	timeScale: number;
	startSeq: number | null;
	status: SoakStatus;
	startedAt: number;
	endedAt: number | null;
	abortReason: string | null;
}

export interface SoakEventView {
	id: number;
	kind: string;
	at: number;
	detail: unknown;
}

export interface SoakRunDetail {
	run: SoakRunView;
	limits: SoakLimits;
	readingCount: number;
	/** Highest seq stored (any probe); backfill from the bridge asks for readings after it. */
	lastSeq: number | null;
	verdict: SoakVerdict | null;
	/** Kept up to date as readings arrive; final once the run has ended. Every figure of the run reads from it. */
	summary: SoakSummary;
	/** The run's chart downsampled to a fixed number of buckets (mean, min, max °C per probe). */
	series: SoakSeries;
	/** While the run goes on: the series' bucket rows, so a resuming page can keep the chart growing. */
	seriesRows?: SeriesBucketRow[];
	events: SoakEventView[];
}

export interface SoakRunListItem {
	run: SoakRunView;
	verdict: SoakVerdict | null;
	/** Maximum °C per probe (from the stored summary, or live while running). */
	maxC: Record<string, number>;
	/** Readings stored so far (live while the run is going). */
	readingCount: number;
	/** Soak seconds the judged record covers. */
	coveredS: number;
	/** A small chart: soak minutes and mean °C per probe in about 48 buckets. */
	thumb: { minutes: number[]; probes: Record<string, (number | null)[]> };
}
