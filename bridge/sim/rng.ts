// Seeded pseudo-random numbers for the simulator, so a given seed always gives the same
// noise, hum phases and fault behaviour (sfc32 generator, seeded through splitmix32).

function splitmix32(seed: number): () => number {
	let s = seed >>> 0;
	return () => {
		s = (s + 0x9e3779b9) >>> 0;
		let z = s;
		z = Math.imul(z ^ (z >>> 16), 0x85ebca6b) >>> 0;
		z = Math.imul(z ^ (z >>> 13), 0xc2b2ae35) >>> 0;
		return (z ^ (z >>> 16)) >>> 0;
	};
}

const GAUSS_TABLE_SIZE = 1 << 16;
let gaussTable: Float64Array | null = null;

/**
 * 65 536 standard-normal values (Box–Muller from a fixed seed, rescaled to exactly unit rms),
 * drawn by random index for bulk noise: an order of magnitude cheaper than Box–Muller per
 * sample and statistically indistinguishable for a noise floor.
 */
function gaussianTable(): Float64Array {
	if (gaussTable) return gaussTable;
	const r = new Rng(0x5eed);
	const t = new Float64Array(GAUSS_TABLE_SIZE);
	let mean = 0;
	for (let i = 0; i < t.length; i++) mean += t[i] = r.gaussian();
	mean /= t.length;
	let sq = 0;
	for (let i = 0; i < t.length; i++) sq += (t[i] -= mean) ** 2;
	const k = 1 / Math.sqrt(sq / t.length);
	for (let i = 0; i < t.length; i++) t[i] *= k;
	gaussTable = t;
	return t;
}

export class Rng {
	private a: number;
	private b: number;
	private c: number;
	private d: number;
	private spare = 0;
	private hasSpare = false;

	constructor(seed: number) {
		const mix = splitmix32(seed);
		this.a = mix();
		this.b = mix();
		this.c = mix();
		this.d = mix();
		for (let i = 0; i < 12; i++) this.nextU32();
	}

	nextU32(): number {
		const t = (((this.a + this.b) | 0) + this.d) | 0;
		this.d = (this.d + 1) | 0;
		this.a = this.b ^ (this.b >>> 9);
		this.b = (this.c + (this.c << 3)) | 0;
		this.c = (this.c << 21) | (this.c >>> 11);
		this.c = (this.c + t) | 0;
		return t >>> 0;
	}

	/** Uniform in [0, 1). */
	uniform(): number {
		return this.nextU32() / 4294967296;
	}

	/** Standard normal (Box–Muller, one value cached). */
	gaussian(): number {
		if (this.hasSpare) {
			this.hasSpare = false;
			return this.spare;
		}
		let u = this.uniform();
		while (u <= 1e-300) u = this.uniform();
		const r = Math.sqrt(-2 * Math.log(u));
		const th = 2 * Math.PI * this.uniform();
		this.spare = r * Math.sin(th);
		this.hasSpare = true;
		return r * Math.cos(th);
	}

	private xs = 0;

	/** Add (or write) `n` normal values of standard deviation `sigma` to `dst`. */
	fillGaussian(dst: Float64Array, n: number, sigma: number, add = false): void {
		const t = gaussianTable();
		let x = this.xs || this.nextU32() | 1;
		if (add) {
			for (let i = 0; i < n; i++) {
				x ^= x << 13;
				x ^= x >>> 17;
				x ^= x << 5;
				dst[i] += sigma * t[x >>> 16];
			}
		} else {
			for (let i = 0; i < n; i++) {
				x ^= x << 13;
				x ^= x >>> 17;
				x ^= x << 5;
				dst[i] = sigma * t[x >>> 16];
			}
		}
		this.xs = x;
	}

	/** A derived generator, so one feature's randomness does not shift another's. */
	fork(salt: number): Rng {
		return new Rng((this.nextU32() ^ Math.imul(salt, 0x27d4eb2d)) >>> 0);
	}
}
