// Shapes of the soak API's answers, shared by the server and the browser.
import type { SoakChannel, SoakPresetId } from './presets';
import type { SoakLimits } from './soak-limits';
import type { SoakSummary } from './verdict';

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
	summary: SoakSummary;
	events: SoakEventView[];
}

export interface SoakRunListItem {
	run: SoakRunView;
	verdict: SoakVerdict | null;
	/** Maximum °C per probe (from the stored summary, or live while running). */
	maxC: Record<string, number>;
	/** A small chart: soak minutes and mean °C per probe in up to `thumbPoints` buckets. */
	thumb: { minutes: number[]; probes: Record<string, (number | null)[]> };
}
