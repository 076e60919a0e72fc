// What the bridge server needs from a temperature source (simulated, serial logger or none).
import type { TempsKind } from '../../src/lib/bridge/protocol';

export interface TempsSource {
	readonly kind: TempsKind;
	/** Lines from a logger that could not be read (always 0 for the simulator). */
	readonly badLines: number;
	start(): Promise<void> | void;
	stop(): Promise<void>;
}
