// Simulated temperature probes: reads the thermal model once a second (wall clock) and logs
// heatsinks, transformer and ambient with a little sensor noise.
import type { TempsSource } from './types';
import type { TempLog } from './ring';
import type { AmplifierThermal } from '../sim/thermal';
import { Rng } from '../sim/rng';

/** Sensor noise (°C, one standard deviation), from memory: typical of a cheap logger. */
const SENSOR_NOISE_C = 0.03;

export class SimTemps implements TempsSource {
	readonly kind = 'sim' as const;
	readonly badLines = 0;
	private timer: ReturnType<typeof setInterval> | null = null;
	private readonly rng: Rng;

	constructor(
		private readonly thermal: AmplifierThermal,
		private readonly log: TempLog,
		seed: number,
		private readonly intervalMs = 1000
	) {
		this.rng = new Rng(seed ^ 0x7e3a);
	}

	/** Take one set of readings now. */
	sample(tMs = Date.now()): void {
		const noisy = (c: number) => Math.round((c + SENSOR_NOISE_C * this.rng.gaussian()) * 100) / 100;
		this.log.record(
			[
				{ probe: 'heatsink-left', celsius: noisy(this.thermal.heatsinks[0].tempC) },
				{ probe: 'heatsink-right', celsius: noisy(this.thermal.heatsinks[1].tempC) },
				{ probe: 'transformer', celsius: noisy(this.thermal.transformer.tempC) },
				{ probe: 'ambient', celsius: noisy(this.thermal.ambientC) }
			],
			tMs
		);
	}

	start(): void {
		this.sample();
		this.timer = setInterval(() => this.sample(), this.intervalMs);
	}

	async stop(): Promise<void> {
		if (this.timer) clearInterval(this.timer);
		this.timer = null;
	}
}

export class NoTemps implements TempsSource {
	readonly kind = 'none' as const;
	readonly badLines = 0;
	start(): void {}
	async stop(): Promise<void> {}
}
