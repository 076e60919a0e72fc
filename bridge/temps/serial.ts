// Temperature logger on a serial port (the `serialport` package): reads text lines, logs
// good readings, counts and skips bad lines, and reopens the port if it goes away.
import { SerialPort } from 'serialport';
import type { TempsSource } from './types';
import type { TempLog } from './ring';
import { MAX_LINE_CHARS, parseLoggerLine, type LoggerContext } from './parse';

/** The parts of a serial port stream this module uses (SerialPort, or SerialPortMock in tests). */
export interface SerialLike extends NodeJS.ReadableStream {
	close(cb?: (err: Error | null) => void): void;
	isOpen: boolean;
	on(event: 'open' | 'close', listener: () => void): this;
	on(event: 'error', listener: (err: Error) => void): this;
	on(event: string, listener: (...args: unknown[]) => void): this;
}

export type PortFactory = (opts: { path: string; baudRate: number }) => SerialLike;

const defaultFactory: PortFactory = (opts) =>
	new SerialPort({ ...opts, autoOpen: true }) as unknown as SerialLike;

const REOPEN_MS = 5000;

export class SerialTemps implements TempsSource {
	readonly kind = 'serial' as const;
	badLines = 0;
	goodLines = 0;
	lastError: string | null = null;
	private port: SerialLike | null = null;
	private reopenTimer: ReturnType<typeof setTimeout> | null = null;
	private stopped = false;
	private readonly ctx: LoggerContext = { coldJunctionC: 0 };

	constructor(
		private readonly log: TempLog,
		readonly path: string,
		readonly baudRate: number,
		private readonly factory: PortFactory = defaultFactory,
		private readonly report: (msg: string) => void = () => {}
	) {}

	/** Handle one logger line (public so tests can feed lines directly too). */
	handleLine(line: string): void {
		const r = parseLoggerLine(line, this.ctx);
		if (!r.ok) {
			this.badLines++;
			this.lastError = r.error;
			return;
		}
		if (r.readings.length) {
			this.goodLines++;
			this.log.record(r.readings);
		}
	}

	private open(): void {
		if (this.stopped) return;
		let port: SerialLike;
		try {
			port = this.factory({ path: this.path, baudRate: this.baudRate });
		} catch (e) {
			this.fail(e as Error);
			return;
		}
		this.port = port;
		// Our own splitter rather than a readline parser: a logger spewing bytes without a
		// newline must not grow a buffer without bound; overlong lines count as bad.
		let pending = '';
		let overlong = false;
		port.on('data', (chunk: unknown) => {
			const text = Buffer.isBuffer(chunk) ? chunk.toString('utf8') : String(chunk);
			const pieces = (pending + text).split('\n');
			pending = pieces.pop() ?? '';
			for (const line of pieces) {
				if (overlong) {
					overlong = false;
					this.badLines++;
					continue;
				}
				this.handleLine(line);
			}
			if (pending.length > MAX_LINE_CHARS) {
				pending = '';
				overlong = true;
			}
		});
		port.on('error', (err: Error) => this.fail(err));
		port.on('close', () => {
			if (this.port === port) {
				this.port = null;
				this.scheduleReopen();
			}
		});
	}

	private fail(err: Error): void {
		this.lastError = err.message;
		this.report(`temperature logger ${this.path}: ${err.message}`);
		const p = this.port;
		this.port = null;
		if (p?.isOpen) p.close(() => {});
		this.scheduleReopen();
	}

	private scheduleReopen(): void {
		if (this.stopped || this.reopenTimer) return;
		this.reopenTimer = setTimeout(() => {
			this.reopenTimer = null;
			this.open();
		}, REOPEN_MS);
	}

	start(): void {
		this.stopped = false;
		this.open();
	}

	async stop(): Promise<void> {
		this.stopped = true;
		if (this.reopenTimer) clearTimeout(this.reopenTimer);
		this.reopenTimer = null;
		const p = this.port;
		this.port = null;
		if (p?.isOpen) await new Promise<void>((resolve) => p.close(() => resolve()));
	}
}
