// The soak page's outbox without a browser: what is not acknowledged survives a reload, a 400's
// valid readings count as settled while the rejected are counted, and a server that is away is
// retried with a doubling wait up to the cap, nothing lost.
import { describe, expect, it } from 'vitest';
import { MAX_BACKOFF_MS, outboxKeys, ReadingOutbox, type OutboxStorage } from './soak-session-outbox';
import type { StoredReadingLike } from './soak-session-types';

class MemoryStorage implements OutboxStorage {
	data = new Map<string, string>();
	getItem(k: string) {
		return this.data.get(k) ?? null;
	}
	setItem(k: string, v: string) {
		this.data.set(k, v);
	}
	removeItem(k: string) {
		this.data.delete(k);
	}
}

const reading = (seq: number): StoredReadingLike => ({
	probe: 'heatsink-left',
	seq,
	t: 1_800_000_000_000 + seq * 1000,
	celsius: 30 + seq / 100,
	bootId: 'boot-a'
});
const json = (status: number, body: unknown) =>
	new Response(JSON.stringify(body), { status, headers: { 'content-type': 'application/json' } });

function setup(answers: (Response | null)[]) {
	const storage = new MemoryStorage();
	const posted: unknown[][] = [];
	let now = 0;
	const outbox = new ReadingOutbox(7, {
		storage,
		now: () => now,
		sleep: async (ms) => void (now += ms),
		batchSize: 3,
		transport: {
			postReadings: async (_id, readings) => {
				posted.push(readings);
				return answers.length ? (answers.shift() as Response | null) : json(200, {});
			},
			postEvents: async () => json(200, {})
		}
	});
	return { storage, posted, outbox, advance: (ms: number) => (now += ms) };
}

describe('ReadingOutbox', () => {
	it('keeps what is not acknowledged in storage, so a reload restores it', async () => {
		const { storage, outbox } = setup([null]);
		for (let s = 1; s <= 4; s++) outbox.addReading(reading(s));
		outbox.addEvent({ kind: 'note', at: 1, key: 'n1', detail: { text: 'lid off' } });
		outbox.persist();
		expect(await outbox.uploadSome()).toBe(false); // the server did not answer
		const reopened = new ReadingOutbox(7, {
			storage,
			transport: { postReadings: async () => null, postEvents: async () => null }
		});
		const restored = reopened.restore();
		expect(restored.readings.map((r) => r.seq)).toEqual([1, 2, 3, 4]);
		expect(restored.events.map((e) => e.key)).toEqual(['n1']);
		expect(reopened.pendingCount).toBe(4);
		reopened.close();
		expect(storage.getItem(outboxKeys.pending(7))).toBeNull();
	});

	it('uploads in seq order, oldest batch first, until everything is acknowledged', async () => {
		const { posted, outbox } = setup([]);
		for (const s of [5, 1, 4, 2, 3]) outbox.addReading(reading(s));
		await outbox.flush();
		expect(posted.map((b) => (b as StoredReadingLike[]).map((r) => r.seq))).toEqual([
			[1, 2, 3],
			[4, 5]
		]);
		expect(outbox.pendingCount).toBe(0);
		expect(outbox.error).toBeNull();
	});

	it('a 400 settles its batch and counts the rejected readings; a 500 keeps it', async () => {
		const { outbox } = setup([json(500, { message: 'disk full' }), json(400, { rejected: [{ index: 1 }] })]);
		for (let s = 1; s <= 3; s++) outbox.addReading(reading(s));
		expect(await outbox.uploadSome(true)).toBe(false);
		expect(outbox.pendingCount).toBe(3);
		expect(outbox.error).toBe('disk full; keeping 3 reading(s) and retrying');
		expect(await outbox.uploadSome(true)).toBe(true);
		expect(outbox.pendingCount).toBe(0);
		expect(outbox.rejectedCount).toBe(1);
	});

	it('waits 1, 2, 4 … s between failed tries, capped at 15 s, and starts again at 1 s after a success', async () => {
		const { outbox, posted, advance } = setup(Array(6).fill(null));
		outbox.addReading(reading(1));
		expect(await outbox.uploadSome()).toBe(false); // the first try: no answer
		// Each failure doubles the wait from 1 s, capped at 15 s: the retry is not sent a
		// millisecond early, and is sent once the wait is over.
		for (const wait of [1000, 2000, 4000, 8000, MAX_BACKOFF_MS, MAX_BACKOFF_MS]) {
			const tries = posted.length;
			advance(wait - 1);
			await outbox.uploadSome();
			expect(posted.length).toBe(tries);
			advance(1);
			await outbox.uploadSome();
			expect(posted.length).toBe(tries + 1);
		}
		expect(outbox.pendingCount).toBe(0); // the sixth retry was answered
		expect(outbox.backoffMs).toBe(1000);
	});
});
