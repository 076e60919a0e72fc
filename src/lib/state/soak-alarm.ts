// The soak page's audible alarm: a two-tone pulse through WebAudio that repeats until silenced.
// Browsers start audio only after a user gesture, so `unlock()` is called from the Start click.

export class SoakAlarmSound {
	#ctx: AudioContext | null = null;
	#timer: ReturnType<typeof setInterval> | null = null;
	#nextAt = 0;

	/** Create or resume the audio context; call from a click so later alarms can sound. */
	unlock(): void {
		try {
			this.#ctx ??= new AudioContext();
			if (this.#ctx.state === 'suspended') void this.#ctx.resume();
		} catch {
			this.#ctx = null;
		}
	}

	/** True while the alarm is sounding (the context is running and pulses are scheduled). */
	get sounding(): boolean {
		return this.#timer !== null && this.#ctx?.state === 'running';
	}

	get playing(): boolean {
		return this.#timer !== null;
	}

	start(): void {
		if (this.#timer) return;
		this.unlock();
		const ctx = this.#ctx;
		if (!ctx) return;
		this.#nextAt = ctx.currentTime + 0.05;
		// Schedule a second ahead, topping up four times a second, so timer jitter never leaves a hole.
		const schedule = () => {
			while (this.#nextAt < ctx.currentTime + 1) {
				this.#pulse(ctx, this.#nextAt, 880);
				this.#pulse(ctx, this.#nextAt + 0.22, 660);
				this.#nextAt += 0.6;
			}
		};
		schedule();
		this.#timer = setInterval(schedule, 250);
	}

	stop(): void {
		if (this.#timer) clearInterval(this.#timer);
		this.#timer = null;
	}

	dispose(): void {
		this.stop();
		void this.#ctx?.close().catch(() => {});
		this.#ctx = null;
	}

	#pulse(ctx: AudioContext, at: number, frequencyHz: number): void {
		const osc = ctx.createOscillator();
		const gain = ctx.createGain();
		osc.type = 'square';
		osc.frequency.value = frequencyHz;
		gain.gain.setValueAtTime(0, at);
		gain.gain.linearRampToValueAtTime(0.18, at + 0.01);
		gain.gain.setValueAtTime(0.18, at + 0.18);
		gain.gain.linearRampToValueAtTime(0, at + 0.2);
		osc.connect(gain).connect(ctx.destination);
		osc.start(at);
		osc.stop(at + 0.21);
	}
}
