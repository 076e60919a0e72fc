// How the compare page names and colours each picked snapshot, the same in the chart, the tables
// and the legend. Channels are told apart by line style (left solid, right dashed), snapshots by
// colour and by name, so colour is never the only signal.
import type { CompareSnapshot } from './compare-api';

/** Theme colours for snapshots 1…6, chosen apart from the two channel colours; the faint grey comes last. */
export const SNAPSHOT_COLORS = ['--accent', '--info', '--hold', '--ok', '--text', '--muted'] as const;

export const STAGE_LABEL: Record<string, string> = { before: 'Before', after: 'After', other: 'Note' };

export function snapshotName(s: Pick<CompareSnapshot, 'id' | 'label' | 'stage'>): string {
	return `#${s.id} ${s.label} (${STAGE_LABEL[s.stage] ?? s.stage})`;
}
