// Stability check: a guided record, not an analysis. A square wave into the load with a capacitor
// across it (8 Ω in parallel with 2 µF is common practice), watched on an oscilloscope; the
// technician records what the trace showed. A 48 kHz stream cannot show ultrasonic oscillation,
// so the bench never judges this from its own audio.

export const STABILITY_OBSERVATIONS = ['none', 'ringing', 'oscillation'] as const;
export type StabilityObservation = (typeof STABILITY_OBSERVATIONS)[number];

export const STABILITY_OBSERVATION_LABELS: Record<StabilityObservation, string> = {
	none: 'Clean edges, no ringing',
	ringing: 'Damped ringing on the edges (dies away within a few cycles)',
	oscillation: 'Sustained oscillation (bursts or a constant high-frequency signal)'
};

/** Common practice: 8 Ω with 2 µF across it. */
export const STABILITY_DEFAULT_LOAD = { loadOhms: 8, capacitanceMicrofarads: 2 } as const;

/** Sustained oscillation fails; a clean trace or damped ringing on a capacitive load passes. */
export function stabilityVerdict(o: StabilityObservation): 'pass' | 'fail' {
	return o === 'oscillation' ? 'fail' : 'pass';
}
