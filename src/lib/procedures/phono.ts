// Phono equalisation check: a sweep into a phono input, its output read against the RIAA
// playback curve. Fed flat, the output should follow the playback curve; fed through an inverse
// RIAA network, it should come out flat — minus the network's own known error, which is removed.
import { riaaPlaybackDb } from '$lib/dsp/riaa';
import { relativeLevelsDb, type SweepStep } from './sweep';

export const PHONO_FEEDS = ['flat', 'inverse-network'] as const;
export type PhonoFeed = (typeof PHONO_FEEDS)[number];

export interface PhonoConditions {
	feed: PhonoFeed;
	/** Whether the IEC 7950 µs low-frequency term is part of the expected curve. */
	iecRolloff: boolean;
	/** The phono input's loading, as the technician set it (recorded with the result). */
	loadingOhms: number;
	loadingPicofarads: number;
	/** The inverse network's own error at each step, dB (how much hotter than ideal it feeds); empty = ideal. */
	networkErrorDb?: readonly number[];
}

export interface PhonoResult {
	/** Expected level re 1 kHz at each step, dB. */
	expectedDb: number[];
	/** Measured minus expected, per step and channel, dB (null where a level is missing). */
	deviationDb: (number | null)[][];
	/** Largest |deviation| per channel, dB. */
	maxDeviationDb: (number | null)[];
	/** Largest |left − right| difference of the deviations, dB (channel matching). */
	channelMatchDb: number | null;
}

export function phonoDeviation(steps: readonly SweepStep[], c: PhonoConditions): PhonoResult {
	const rel = relativeLevelsDb(steps);
	const expectedDb = steps.map((s) =>
		c.feed === 'flat' ? riaaPlaybackDb(s.frequencyHz, { iecRolloff: c.iecRolloff }) : 0
	);
	const deviationDb = rel.map((chs, i) =>
		chs.map((v) => (v == null ? null : v - (c.networkErrorDb?.[i] ?? 0) - expectedDb[i]))
	);
	const channels = Math.max(0, ...steps.map((s) => s.levelVrms.length));
	const maxDeviationDb = Array.from({ length: channels }, (_, ch) => {
		const xs = deviationDb.map((d) => d[ch]).filter((v): v is number => v != null);
		return xs.length ? Math.max(...xs.map(Math.abs)) : null;
	});
	let channelMatchDb: number | null = null;
	for (const d of deviationDb)
		if (d.length >= 2 && d[0] != null && d[1] != null)
			channelMatchDb = Math.max(channelMatchDb ?? 0, Math.abs(d[0] - d[1]));
	return { expectedDb, deviationDb, maxDeviationDb, channelMatchDb };
}
