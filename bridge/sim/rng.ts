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

	/** A derived generator, so one feature's randomness does not shift another's. */
	fork(salt: number): Rng {
		return new Rng((this.nextU32() ^ Math.imul(salt, 0x27d4eb2d)) >>> 0);
	}
}
