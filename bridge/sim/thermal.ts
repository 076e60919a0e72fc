// Thermal model of the amplifier under test: first-order heatsinks (left, right) and mains
// transformer above a fixed ambient, driven by the class-AB output stage's dissipation into
// the load, with a time scale so a long soak can be shown in minutes.

/** One first-order thermal node: C·dT/dt = P − (T − T_amb)/Rth, time constant τ = Rth·C. */
export class ThermalNode {
	tempC: number;
	constructor(
		readonly rthKPerW: number,
		readonly tauS: number,
		startC: number
	) {
		this.tempC = startC;
	}
	/** Exact update for power held constant over `dtS` (so the step size never changes the answer). */
	step(dtS: number, powerW: number, ambientC: number): void {
		const steadyC = ambientC + powerW * this.rthKPerW;
		this.tempC = steadyC + (this.tempC - steadyC) * Math.exp(-dtS / this.tauS);
	}
	steadyStateC(powerW: number, ambientC: number): number {
		return ambientC + powerW * this.rthKPerW;
	}
}

export interface AmplifierParams {
	railVolts: number;
	loadOhms: number;
	/** Quiescent current per channel (A) at the present bias. */
	idleCurrentA: number;
}

/** Nominal quiescent current per channel at 100 % bias (from memory: typical for a 50–100 W class-AB stage). */
export const NOMINAL_IDLE_CURRENT_A = 0.05;
export const AMBIENT_C = 23;
// Thermal constants are typical of a 2 × 60–100 W receiver (from memory): about 1 K/W per
// channel heatsink with several minutes' time constant, the transformer slower.
export const HEATSINK_RTH_K_PER_W = 1.0;
export const HEATSINK_TAU_S = 480;
export const TRANSFORMER_RTH_K_PER_W = 1.5;
export const TRANSFORMER_TAU_S = 1500;
/** Transformer core loss (W), present whenever the unit is on. */
export const TRANSFORMER_CORE_W = 6;
/** Copper loss grows with the square of the power drawn: P_cu = k·P_supply² (k in 1/W). */
export const TRANSFORMER_COPPER_K_PER_W = 4e-4;

/**
 * Running sums of one channel's load voltage over a block; class-AB (idealised as class B
 * plus quiescent current): each instant one device carries i = |v|/R from a rail at ±Vcc,
 * so it dissipates (Vcc − |v|)·|v|/R and the supply delivers Vcc·|v|/R.
 */
export function channelPowers(
	sumAbsV: number,
	sumSqV: number,
	count: number,
	p: AmplifierParams
): { dissipationW: number; supplyW: number; outputW: number } {
	if (count === 0) return { dissipationW: 0, supplyW: 0, outputW: 0 };
	const meanAbs = sumAbsV / count;
	const meanSq = sumSqV / count;
	const idleW = 2 * p.railVolts * p.idleCurrentA;
	const supplyW = (p.railVolts * meanAbs) / p.loadOhms + idleW;
	const outputW = meanSq / p.loadOhms;
	return { dissipationW: supplyW - outputW, supplyW, outputW };
}

export class AmplifierThermal {
	readonly heatsinks: ThermalNode[];
	readonly transformer: ThermalNode;
	readonly ambientC = AMBIENT_C;
	/** Simulated seconds elapsed. */
	elapsedS = 0;
	lastDissipationW: number[] = [0, 0];
	lastTransformerW = 0;

	constructor(readonly timeScale = 1) {
		this.heatsinks = [
			new ThermalNode(HEATSINK_RTH_K_PER_W, HEATSINK_TAU_S, AMBIENT_C),
			new ThermalNode(HEATSINK_RTH_K_PER_W, HEATSINK_TAU_S, AMBIENT_C)
		];
		this.transformer = new ThermalNode(TRANSFORMER_RTH_K_PER_W, TRANSFORMER_TAU_S, AMBIENT_C);
	}

	/** Transformer loss for a total supply draw. */
	static transformerLossW(supplyW: number): number {
		return TRANSFORMER_CORE_W + TRANSFORMER_COPPER_K_PER_W * supplyW * supplyW;
	}

	/**
	 * Advance by a block of `wallS` real seconds (× timeScale simulated) with the given
	 * per-channel running sums of load voltage.
	 */
	advance(wallS: number, sums: readonly ChannelSums[], p: AmplifierParams): void {
		const dtS = wallS * this.timeScale;
		let supplyTotal = 0;
		for (let side = 0; side < 2; side++) {
			const s = sums[Math.min(side, sums.length - 1)];
			const pw = channelPowers(s.sumAbsV, s.sumSqV, s.count, p);
			this.lastDissipationW[side] = pw.dissipationW;
			supplyTotal += pw.supplyW;
			this.heatsinks[side].step(dtS, pw.dissipationW, this.ambientC);
		}
		this.lastTransformerW = AmplifierThermal.transformerLossW(supplyTotal);
		this.transformer.step(dtS, this.lastTransformerW, this.ambientC);
		this.elapsedS += dtS;
	}
}

export interface ChannelSums {
	sumAbsV: number;
	sumSqV: number;
	count: number;
}

/**
 * Per-channel running sums of |v| and v² (volts at the load) over a block of interleaved samples.
 * Pass `out` to reuse its objects: the bridge calls this once per frame.
 */
export function blockSums(
	samples: Float32Array,
	channels: number,
	sampleCount: number,
	fullScaleVolts: readonly number[],
	out: ChannelSums[] = []
): ChannelSums[] {
	const n = Math.min(2, channels);
	for (let c = 0; c < n; c++) {
		const fsV = fullScaleVolts[c] ?? fullScaleVolts[0] ?? 1;
		let sa = 0;
		let sq = 0;
		for (let i = c; i < sampleCount * channels; i += channels) {
			const v = samples[i];
			sa += v < 0 ? -v : v;
			sq += v * v;
		}
		const o = (out[c] ??= { sumAbsV: 0, sumSqV: 0, count: 0 });
		o.sumAbsV = sa * fsV;
		o.sumSqV = sq * fsV * fsV;
		o.count = sampleCount;
	}
	out.length = n;
	return out;
}
