// Steadiness: how much level and THD+N wander over recent frames. A worn or dirty control shows as a
// large spread that shrinks once the part is cleaned; the live meter feeds a fixed-size ring buffer.

export interface SteadinessSample {
	levelDbv: number;
	/** Null for a frame without a tone; such frames are left out. */
	thdnDb: number | null;
}

export interface SteadinessStats {
	frames: number;
	levelMeanDbv: number;
	/** max − min of the level over the window, dB. */
	levelSpreadDb: number;
	/** Population standard deviation of the level, dB. */
	levelStdDb: number;
	thdnMeanDb: number;
	thdnSpreadDb: number;
	thdnStdDb: number;
}

function emptyStats(): SteadinessStats {
	return {
		frames: 0,
		levelMeanDbv: 0,
		levelSpreadDb: 0,
		levelStdDb: 0,
		thdnMeanDb: 0,
		thdnSpreadDb: 0,
		thdnStdDb: 0
	};
}

function statsOf(
	levels: ArrayLike<number>,
	thdns: ArrayLike<number>,
	count: number,
	out: SteadinessStats
): SteadinessStats {
	out.frames = count;
	if (count === 0) return Object.assign(out, emptyStats());
	let lMin = Infinity;
	let lMax = -Infinity;
	let tMin = Infinity;
	let tMax = -Infinity;
	let lSum = 0;
	let tSum = 0;
	for (let i = 0; i < count; i++) {
		const l = levels[i];
		const t = thdns[i];
		if (l < lMin) lMin = l;
		if (l > lMax) lMax = l;
		if (t < tMin) tMin = t;
		if (t > tMax) tMax = t;
		lSum += l;
		tSum += t;
	}
	const lMean = lSum / count;
	const tMean = tSum / count;
	let lVar = 0;
	let tVar = 0;
	for (let i = 0; i < count; i++) {
		lVar += (levels[i] - lMean) ** 2;
		tVar += (thdns[i] - tMean) ** 2;
	}
	out.levelMeanDbv = lMean;
	out.levelSpreadDb = lMax - lMin;
	out.levelStdDb = Math.sqrt(lVar / count);
	out.thdnMeanDb = tMean;
	out.thdnSpreadDb = tMax - tMin;
	out.thdnStdDb = Math.sqrt(tVar / count);
	return out;
}

/** Spread (max − min and standard deviation) of level and THD+N over the given frames. */
export function steadiness(history: readonly SteadinessSample[]): SteadinessStats {
	const toned = history.filter((h): h is { levelDbv: number; thdnDb: number } => h.thdnDb !== null);
	const levels = toned.map((h) => h.levelDbv);
	const thdns = toned.map((h) => h.thdnDb);
	return statsOf(levels, thdns, toned.length, emptyStats());
}

/** Fixed-capacity ring of recent frames; push() and stats() allocate nothing. */
export class SteadinessTracker {
	readonly capacity: number;
	private readonly levels: Float64Array;
	private readonly thdns: Float64Array;
	private count = 0;
	private next = 0;
	private readonly out = emptyStats();

	constructor(capacity = 50) {
		if (!(capacity >= 2)) throw new RangeError('steadiness window needs at least 2 frames');
		this.capacity = Math.floor(capacity);
		this.levels = new Float64Array(this.capacity);
		this.thdns = new Float64Array(this.capacity);
	}

	/** A frame without a tone (thdnDb null) is not a sample of a steady tone: it is skipped. */
	push(levelDbv: number, thdnDb: number | null): void {
		if (thdnDb === null || !Number.isFinite(levelDbv) || !Number.isFinite(thdnDb)) return;
		this.levels[this.next] = levelDbv;
		this.thdns[this.next] = thdnDb;
		this.next = (this.next + 1) % this.capacity;
		if (this.count < this.capacity) this.count++;
	}

	get size(): number {
		return this.count;
	}

	reset(): void {
		this.count = 0;
		this.next = 0;
	}

	/** Statistics over the frames held (order does not matter for spread or deviation). The object is reused. */
	stats(): SteadinessStats {
		return statsOf(this.levels, this.thdns, this.count, this.out);
	}
}
