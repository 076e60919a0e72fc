// The one place probe ids become the names a person reads ("Heatsink L", never `heatsink-left`):
// alarms, breach messages, events, the job page and the charts all label probes from here.
export const PROBE_LABELS: Record<string, string> = {
	'heatsink-left': 'Heatsink L',
	'heatsink-right': 'Heatsink R',
	transformer: 'Transformer',
	ambient: 'Ambient',
	'heatsink-left/heatsink-right': 'Heatsinks L/R',
	left: 'Left channel',
	right: 'Right channel',
	output: 'Output'
};

/** A probe's (or channel's) readable name; an unknown id is shown as given. */
export function probeLabel(probe: string): string {
	return PROBE_LABELS[probe] ?? probe;
}

/** The colour (a CSS custom property) each probe is drawn in, on every chart and swatch. */
export const PROBE_COLORS: Record<string, string> = {
	'heatsink-left': '--ch-left',
	'heatsink-right': '--ch-right',
	transformer: '--info',
	ambient: '--muted'
};
export const probeColor = (probe: string) => PROBE_COLORS[probe] ?? '--text';
