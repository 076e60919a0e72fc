// Temperature inputs: type K conversion against NIST ITS-90, logger lines, the serial
// logger through the mock binding, and the history ring used for backfill.
import { afterEach, describe, expect, it } from 'vitest';
import { SerialPortMock } from 'serialport';
import { typeKCelsiusToMillivolts, typeKMillivoltsToCelsius, typeKCompensated } from './typek';
import { parseLoggerLine } from './parse';
import { SerialTemps, type SerialLike } from './serial';
import { TempLog, TempRing } from './ring';
import { SimTemps } from './sim';
import { AmplifierThermal, AMBIENT_C } from '../sim/thermal';
import { PROBE_IDS, type TempReading } from '../../src/lib/bridge/protocol';

describe('type K thermocouple (NIST ITS-90, Monograph 175)', () => {
	// NIST Monograph 175 table values (REFERENCES.md §4): EMF in mV at the given °C, reference junction 0 °C.
	const table: [number, number][] = [
		[0, 0.0],
		[25, 1.0],
		[50, 2.023],
		[100, 4.096],
		[200, 8.138],
		[300, 12.209],
		[350, 14.293], // confirmed value, thermibel.be (REFERENCES.md §4)
		[500, 20.644] // boundary of the NIST inverse range
	];
	it.each(table)('%f °C ↔ %f mV', (celsius, mv) => {
		// NIST inverse polynomial stated error −0.05 to +0.04 °C; the table EMF is rounded to 1 µV (≈ 0.025 °C).
		expect(Math.abs(typeKMillivoltsToCelsius(mv) - celsius)).toBeLessThan(0.06);
		expect(Math.abs(typeKCelsiusToMillivolts(celsius) - mv)).toBeLessThan(0.0006);
	});

	it('matches the reference function to the microvolt (REFERENCES.md §4, computed E(100) = 4.096230 mV)', () => {
		expect(typeKCelsiusToMillivolts(100)).toBeCloseTo(4.09623, 5);
		expect(typeKCelsiusToMillivolts(25)).toBeCloseTo(1.000242, 5);
		expect(typeKCelsiusToMillivolts(500)).toBeCloseTo(20.644286, 5);
	});

	it('compensates the cold junction and refuses EMFs outside the inverse range', () => {
		// Hot junction 100 °C, cold junction 25 °C: the meter sees E(100) − E(25).
		const seen = typeKCelsiusToMillivolts(100) - typeKCelsiusToMillivolts(25);
		expect(typeKCompensated(seen, 25)).toBeCloseTo(100, 1);
		expect(() => typeKMillivoltsToCelsius(-0.1)).toThrow(RangeError);
		expect(() => typeKMillivoltsToCelsius(25)).toThrow(RangeError);
	});
});

describe('logger lines', () => {
	it('reads °C, °F and millivolts, several pairs a line', () => {
		const ctx = { coldJunctionC: 0 };
		expect(parseLoggerLine('heatsink-left=45.25', ctx)).toEqual({
			ok: true,
			readings: [{ probe: 'heatsink-left', celsius: 45.25 }]
		});
		expect(parseLoggerLine('ambient=77F', ctx)).toEqual({
			ok: true,
			readings: [{ probe: 'ambient', celsius: 25 }]
		});
		expect(parseLoggerLine('ambient = 212 °F\r', ctx)).toEqual({
			ok: true,
			readings: [{ probe: 'ambient', celsius: 100 }]
		});
		const r = parseLoggerLine('transformer=4.096mV, heatsink-right=30.5°C', ctx);
		expect(r.ok && r.readings.map((x) => x.probe)).toEqual(['transformer', 'heatsink-right']);
		expect(r.ok && Math.abs(r.readings[0].celsius - 100)).toBeLessThan(0.06);
	});

	it('refuses bad lines without throwing', () => {
		const ctx = { coldJunctionC: 0 };
		for (const line of [
			'garbage',
			'heatsink-left=',
			'heatsink-left=abc',
			'fan=30',
			'ambient=9999',
			'ambient=30K',
			'ambient=25mV',
			'x'.repeat(300),
			'=5',
			'heatsink-left=1e999'
		])
			expect(parseLoggerLine(line, ctx).ok, line).toBe(false);
		expect(parseLoggerLine('', ctx)).toMatchObject({ ok: true, readings: [] });
	});
});

describe('serial temperature logger', () => {
	// serialport's mock port is built on @serialport/binding-mock; use that same (CommonJS)
	// instance, since an ES import of the package would be a second copy with its own ports.
	const MockBinding = SerialPortMock.binding;
	afterEach(() => MockBinding.reset());

	it('logs good lines from a mock serial port and counts bad ones', async () => {
		const path = '/dev/ttyBENCH0';
		MockBinding.createPort(path, { echo: false, record: false });
		const log = new TempLog(1_000_000);
		let mock: SerialPortMock | null = null;
		const temps = new SerialTemps(log, path, 9600, (opts) => {
			mock = new SerialPortMock({ ...opts });
			return mock as unknown as SerialLike;
		});
		temps.start();
		await new Promise<void>((resolve, reject) => {
			mock!.on('open', () => resolve());
			mock!.on('error', reject);
		});
		mock!.port!.emitData('heatsink-left=41.5\nambient=71.6F\nbroken line\nheatsink-right=2.023m');
		mock!.port!.emitData('V\ncj=20, transformer=1.2mV\nfan=3\n');
		await new Promise((r) => setTimeout(r, 50));
		await temps.stop();
		const stored = log.ring.after(-1, 100);
		expect(stored.map((r) => r.probe)).toEqual(['heatsink-left', 'ambient', 'heatsink-right', 'transformer']);
		expect(stored.map((r) => r.seq)).toEqual([1_000_000, 1_000_001, 1_000_002, 1_000_003]);
		expect(stored[0].celsius).toBe(41.5);
		expect(stored[1].celsius).toBe(22);
		expect(Math.abs(stored[2].celsius - 50)).toBeLessThan(0.06);
		// 1.2 mV above a 20 °C cold junction: E(20) + 1.2 mV inverted.
		expect(stored[3].celsius).toBeCloseTo(typeKMillivoltsToCelsius(typeKCelsiusToMillivolts(20) + 1.2), 1);
		expect(temps.badLines).toBe(2);
	});
});

describe('temperature history', () => {
	it('numbers readings from the boot wall-clock ms so a restart keeps them increasing', () => {
		const first = new TempLog(1_700_000_000_000);
		first.record([{ probe: 'ambient', celsius: 22 }]);
		const last = first.record([
			{ probe: 'ambient', celsius: 22 },
			{ probe: 'transformer', celsius: 30 }
		]);
		const restarted = new TempLog(1_700_000_005_000);
		const after = restarted.record([{ probe: 'ambient', celsius: 22 }]);
		expect(last.map((r) => r.seq)).toEqual([1_700_000_000_001, 1_700_000_000_002]);
		expect(after[0].seq).toBeGreaterThan(last[1].seq);
	});

	it('backfills everything after a sequence number and keeps the newest when full', () => {
		const ring = new TempRing(10);
		for (let i = 0; i < 25; i++) ring.push({ probe: 'ambient', seq: 100 + i, t: i, celsius: i / 4 });
		expect(ring.size).toBe(10);
		expect(ring.oldestSeq()).toBe(115);
		expect(ring.after(119, 100).map((r) => r.seq)).toEqual([120, 121, 122, 123, 124]);
		expect(ring.after(0, 3).map((r) => r.seq)).toEqual([115, 116, 117]);
		expect(ring.after(124, 10)).toEqual([]);
		expect(ring.latest()).toEqual([{ probe: 'ambient', seq: 124, t: 24, celsius: 6 }]);
	});

	it('keeps every reading in order across several grows and then across wrap-around', () => {
		// 12 000 readings: the ring starts at 4096 slots and grows twice (8192, then its capacity
		// of 10 000), then wraps and drops the oldest 2000.
		const ring = new TempRing(10_000);
		const pushed: TempReading[] = [];
		for (let i = 0; i < 12_000; i++) {
			const r: TempReading = { probe: PROBE_IDS[i % 4], seq: 5000 + i, t: 1000 * i, celsius: (i % 1000) / 4 };
			pushed.push(r);
			ring.push(r);
			// Mid-run, right after each grow: nothing lost, nothing invented.
			if (i === 4096 || i === 8192) {
				expect(ring.oldestSeq()).toBe(5000);
				expect(ring.after(-1, 20_000)).toEqual(pushed);
				expect(ring.after(5000 + 4000, 200)).toEqual(pushed.slice(4001, 4201));
			}
		}
		expect(ring.size).toBe(10_000);
		expect(ring.oldestSeq()).toBe(7000);
		expect(ring.lastSeq()).toBe(16_999);
		const kept = pushed.slice(2000);
		expect(ring.after(-1, 20_000)).toEqual(kept);
		for (const x of [6999, 7000, 9095, 9096, 12_191, 13_193, 16_998]) {
			expect(ring.after(x, 20_000)).toEqual(kept.filter((r) => r.seq > x));
		}
		expect(ring.after(16_999, 10)).toEqual([]);
		expect(ring.latest()).toEqual(pushed.slice(-4));
	});

	it("holds 24 hours of the simulator's four probes at one reading a second without dropping any", () => {
		const thermal = new AmplifierThermal(1);
		const bootMs = 1_700_000_000_000;
		const log = new TempLog(bootMs);
		const sim = new SimTemps(thermal, log, 7); // the simulator's default interval is 1000 ms
		const seconds = 24 * 3600;
		for (let s = 0; s < seconds; s++) sim.sample(bootMs + 1000 * s);
		expect(log.ring.size).toBe(seconds * PROBE_IDS.length);
		expect(log.ring.oldestSeq()).toBe(bootMs);
		expect(log.ring.lastSeq()).toBe(bootMs + seconds * PROBE_IDS.length - 1);
		const first = log.ring.after(-1, 4);
		expect(first.map((r) => [r.probe, r.t])).toEqual(PROBE_IDS.map((p) => [p, bootMs]));
		const tail = log.ring.after(bootMs + seconds * PROBE_IDS.length - 5, 10);
		expect(tail.map((r) => r.t)).toEqual([1, 2, 3, 4].map(() => bootMs + 1000 * (seconds - 1)));
		// Idle amplifier: every probe stays near ambient (no zero-filled slots).
		for (const r of log.ring.after(bootMs + 100_000, 1000))
			expect(Math.abs(r.celsius - AMBIENT_C)).toBeLessThan(0.5);
	});
});
