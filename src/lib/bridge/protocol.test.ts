// Control and bridge message schemas: the documented shapes parse, everything else is
// refused with a clear error (never an exception), and sim patches change only what they name.
import { describe, expect, it } from 'vitest';
import {
	DEFAULT_SIMULATOR_STATE,
	HelloMessageSchema,
	applySimPatch,
	bridgeStreamUrl,
	maxSinePowerW,
	parseBridgeMessage,
	parseControlMessage,
	railVoltsForPowerW
} from './protocol';

const valid = [
	{ v: 1, type: 'generator', generator: { kind: 'off' } },
	{ v: 1, type: 'generator', generator: { kind: 'sine', frequencyHz: 1000, levelVrms: 0.5 } },
	{ v: 1, type: 'generator', generator: { kind: 'sine', frequencyHz: 1000, levelVrms: 0.5, drive: 'left' } },
	{ v: 1, type: 'generator', generator: { kind: 'twin-tone', f1Hz: 19000, f2Hz: 20000, levelVrms: 1 } },
	{ v: 1, type: 'generator', generator: { kind: 'smpte', lowHz: 60, highHz: 7000, ratio: 4, levelVrms: 1 } },
	{ v: 1, type: 'generator', generator: { kind: 'noise', levelVrms: 0.1, color: 'pink' } },
	{ v: 1, type: 'input', input: 'phono', id: 'a1' },
	{ v: 1, type: 'load', loadOhms: 4 },
	{
		v: 1,
		type: 'sim',
		volumeDb: -10,
		faults: { scratchyControl: { moving: true }, weakOutputDevice: 'left' }
	},
	{ v: 1, type: 'sim', eqBand: { index: 9, gainDb: -12 }, lowFilter: { enabled: true } },
	{ v: 1, type: 'sim', faults: { dcOffset: true, dcOffsetMv: -75, protectionRelay: { tripAfterS: 600 } } },
	{ v: 1, type: 'sim', faults: { protectionRelay: { enabled: true, tripCelsius: 55, tripAfterS: null } } },
	{ v: 1, type: 'temps-after', seq: 1_767_000_000_000 },
	{ v: 1, type: 'renew', token: 'eyJhbGciOiJIUzI1NiJ9.e30.sig', id: 7 }
];

function lcg(seed: number): () => number {
	let s = seed >>> 0;
	return () => {
		s = (Math.imul(s, 1664525) + 1013904223) >>> 0;
		return s / 4294967296;
	};
}

describe('control messages', () => {
	it('accepts every documented shape', () => {
		for (const m of valid)
			expect(parseControlMessage(JSON.stringify(m)), JSON.stringify(m)).toMatchObject({ ok: true });
	});

	it('refuses wrong versions, unknown types, unknown keys and out-of-range values with a message', () => {
		const bad: unknown[] = [
			'{',
			'null',
			'[]',
			'"text"',
			{ type: 'load', loadOhms: 8 },
			{ v: 2, type: 'load', loadOhms: 8 },
			{ v: 1, type: 'reboot' },
			{ v: 1, type: 'load', loadOhms: 0 },
			{ v: 1, type: 'load', loadOhms: 8, extra: true },
			{ v: 1, type: 'generator', generator: { kind: 'sine', frequencyHz: 1000, levelVrms: 11 } },
			{ v: 1, type: 'generator', generator: { kind: 'sine', frequencyHz: -5, levelVrms: 1 } },
			{ v: 1, type: 'generator', generator: { kind: 'square', frequencyHz: 1000, levelVrms: 1 } },
			{ v: 1, type: 'sim', eqGainsDb: [0, 0, 0] },
			{ v: 1, type: 'sim', eqBand: { index: 10, gainDb: 0 } },
			{ v: 1, type: 'sim', mainsHz: 55 },
			{ v: 1, type: 'sim', faults: { noisySelector: 'centre' } },
			{ v: 1, type: 'temps-after', seq: 1.5 },
			{ v: 1, type: 'sim', faults: { dcOffsetMv: 2500 } },
			{ v: 1, type: 'sim', faults: { protectionRelay: { tripCelsius: 500 } } },
			{ v: 1, type: 'sim', faults: { protectionRelay: { enabled: true, after: 3 } } },
			{ v: 1, type: 'renew', token: '' },
			{ v: 1, type: 'renew', token: 'x'.repeat(3000) },
			{ v: 1, type: 'renew' },
			'x'.repeat(5000)
		];
		for (const b of bad) {
			const r = parseControlMessage(typeof b === 'string' ? b : JSON.stringify(b));
			expect(r.ok, JSON.stringify(b).slice(0, 80)).toBe(false);
			if (!r.ok) expect(r.error.length).toBeGreaterThan(5);
		}
	});

	it('never throws on thousands of mutated and random messages', () => {
		const rnd = lcg(99);
		const pool = [0, -1, 1e308, 'left', null, true, {}, [], 'x', 1.5, 8, 'sine', 1];
		let refused = 0;
		for (let i = 0; i < 4000; i++) {
			const base = structuredClone(valid[i % valid.length]) as Record<string, unknown>;
			const keys = Object.keys(base);
			const k = keys[Math.floor(rnd() * keys.length)];
			base[rnd() < 0.2 ? `k${i}` : k] = pool[Math.floor(rnd() * pool.length)];
			let text = JSON.stringify(base);
			if (rnd() < 0.3) text = text.slice(0, Math.floor(rnd() * text.length));
			if (rnd() < 0.1)
				text = String.fromCharCode(...Array.from({ length: 40 }, () => Math.floor(rnd() * 0xffff)));
			const r = parseControlMessage(text);
			if (!r.ok) refused++;
		}
		expect(refused).toBeGreaterThan(3000);
	});
});

describe('simulator settings', () => {
	it('applies a partial patch and leaves everything else as it was', () => {
		const next = applySimPatch(DEFAULT_SIMULATOR_STATE, {
			eqBand: { index: 2, gainDb: 4 },
			faults: { scratchyControl: { moving: true } }
		});
		expect(next.eqGainsDb).toEqual([0, 0, 4, 0, 0, 0, 0, 0, 0, 0]);
		expect(next.faults.scratchyControl).toEqual({ enabled: false, moving: true, band: 5 });
		expect({ ...next, eqGainsDb: undefined, faults: undefined }).toEqual({
			...DEFAULT_SIMULATOR_STATE,
			eqGainsDb: undefined,
			faults: undefined
		});
		expect(DEFAULT_SIMULATOR_STATE.eqGainsDb[2]).toBe(0);
		const relay = applySimPatch(DEFAULT_SIMULATOR_STATE, {
			faults: { protectionRelay: { enabled: true }, dcOffsetMv: 40 }
		});
		expect(relay.faults.protectionRelay).toEqual({ enabled: true, tripCelsius: 50, tripAfterS: null });
		expect(relay.faults.dcOffsetMv).toBe(40);
		expect(relay.faults.dcOffset).toBe(false);
	});

	it('finds the rails for a rated power: P = V²/(2R) at the clip voltage (REFERENCES.md §5)', () => {
		// 45 W into 8 Ω needs 26.83 V peak; plus the 3 V the output stage cannot swing.
		expect(railVoltsForPowerW(45, 8)).toBeCloseTo(Math.sqrt(2 * 45 * 8) + 3, 9);
		const st = applySimPatch(DEFAULT_SIMULATOR_STATE, { railVolts: railVoltsForPowerW(45, 8) });
		expect(maxSinePowerW(st)).toBeCloseTo(45, 9);
		expect(railVoltsForPowerW(2000, 8)).toBe(100); // the allowed range
		expect(railVoltsForPowerW(0.1, 8)).toBe(10);
	});

	it('reports the largest clean sine power from the rails: P = V²/R (REFERENCES.md §5)', () => {
		// ±42 V rails − 3 V headroom = 39 V peak = 27.58 V rms → 95.06 W into 8 Ω.
		expect(maxSinePowerW(DEFAULT_SIMULATOR_STATE)).toBeCloseTo((39 * 39) / 2 / 8, 9);
	});
});

describe('bridge messages', () => {
	it('parses a hello and rejects junk', () => {
		const hello = {
			type: 'hello',
			protocolVersion: 1,
			bootId: 'b',
			sampleRateHz: 48000,
			channels: 2,
			blockSize: 4096,
			fullScaleVolts: [50, 50],
			source: 'sim',
			sourceLabel: 'simulator (seed 1)',
			temps: 'sim',
			probes: [{ id: 'ambient', label: 'Ambient', kind: 'ambient' }],
			simulator: DEFAULT_SIMULATOR_STATE,
			seed: 1,
			generator: { kind: 'off' },
			timeScale: 1,
			lastTempSeq: null,
			serverTimeMs: 0
		};
		expect(HelloMessageSchema.safeParse(hello).success).toBe(true);
		expect(parseBridgeMessage(JSON.stringify(hello)).ok).toBe(true);
		// A bridge that does not declare its coupling is taken as AC-coupled (no DC reading).
		expect(HelloMessageSchema.parse(hello).dcCoupled).toBe(false);
		const declared = HelloMessageSchema.parse({ ...hello, dcCoupled: true, tokenExpiresAtMs: 120_000 });
		expect(declared).toMatchObject({ dcCoupled: true, tokenExpiresAtMs: 120_000 });
		expect(HelloMessageSchema.safeParse({ ...hello, dcCoupled: 'yes' }).success).toBe(false);
		const renewed = { type: 'renewed', tokenExpiresAtMs: 5, serverTimeMs: 1, role: 'technician', replyTo: 3 };
		expect(parseBridgeMessage(JSON.stringify(renewed))).toEqual({ ok: true, message: renewed });
		expect(parseBridgeMessage('{"type":"nope"}').ok).toBe(false);
		expect(parseBridgeMessage('garbage').ok).toBe(false);
	});

	it('builds the stream URL with the token', () => {
		expect(bridgeStreamUrl('ws://127.0.0.1:8787', 'a.b.c')).toBe('ws://127.0.0.1:8787/stream?token=a.b.c');
	});
});
