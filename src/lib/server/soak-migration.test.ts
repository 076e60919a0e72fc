// The soak_summary migration on a database that already holds soak runs: it backfills every
// stored run's downsampled chart with the buckets the code uses, and the reading count and last
// seq of every ended run, leaving a running run for the server to rebuild once.
import { describe, expect, it } from 'vitest';
import Database from 'better-sqlite3';
import { readdirSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import { migrationsFolder } from './db/open';
import { seriesBucket } from '$lib/soak/series';

function apply(db: Database.Database, file: string): void {
	for (const stmt of readFileSync(join(migrationsFolder(), file), 'utf8').split('--> statement-breakpoint'))
		if (stmt.trim()) db.exec(stmt);
}

describe('the soak_summary migration', () => {
	it('backfills the chart and counts of runs stored before it', () => {
		const files = readdirSync(migrationsFolder())
			.filter((f) => f.endsWith('.sql'))
			.sort();
		const mine = files.find((f) => f.includes('soak_summary')) as string;
		expect(mine).toBeDefined();
		const db = new Database(':memory:');
		for (const f of files.slice(0, files.indexOf(mine))) apply(db, f);
		const T0 = 1_800_000_000_000;
		db.exec(
			`INSERT INTO users (id, email, name, role, password_hash) VALUES ('u1', 'a@example.com', 'A', 'technician', 'x')`
		);
		db.exec(`INSERT INTO customers (name) VALUES ('C')`);
		db.exec(
			`INSERT INTO jobs (customer_id, category, make, model, complaint) VALUES (1, 'receiver', 'Vellum', 'R', 'hot')`
		);
		const insertRun = db.prepare(
			`INSERT INTO soak_runs (job_id, created_by, preset, frequency_hz, load_ohms, drive_power_w, drive_vrms, duration_s, time_scale, channels, limits, probes, status, started_at, summary)
			 VALUES (1, 'u1', 'eighth-power-60', 1000, 8, 12.5, 10, 3600, ?, '["left","right"]', '{}', '["heatsink-left"]', ?, ?, ?)`
		);
		insertRun.run(1, 'passed', T0, JSON.stringify({ probes: {} }));
		insertRun.run(60, 'running', T0, null);
		const insertReading = db.prepare(
			`INSERT INTO soak_readings (run_id, probe, seq, t, celsius) VALUES (?, ?, ?, ?, ?)`
		);
		// Run 1: an hour at 1 s; run 2: a minute on a ×60 clock, plus one reading stored before
		// the time checks existed (t = 0, 1970) that must land in the first bucket, not in bucket −3·10⁸.
		for (let s = 0; s < 3600; s += 10)
			insertReading.run(1, 'heatsink-left', 100 + s, T0 + s * 1000, 30 + (s % 50) / 10);
		for (let s = 0; s < 60; s++) insertReading.run(2, 'heatsink-left', 100 + s, T0 + s * 1000, 40);
		insertReading.run(2, 'heatsink-left', 99, 0, 20);

		apply(db, mine);

		const rows = db
			.prepare(
				`SELECT run_id AS runId, probe, bucket, n, sum_c AS sumC, min_c AS minC, max_c AS maxC FROM soak_series ORDER BY run_id, bucket`
			)
			.all() as { runId: number; bucket: number; n: number; sumC: number }[];
		// Every reading is counted once, in the bucket the code would put it in.
		const readings = db.prepare(`SELECT run_id AS runId, t, celsius FROM soak_readings`).all() as {
			runId: number;
			t: number;
			celsius: number;
		}[];
		const expected = new Map<string, number>();
		for (const r of readings) {
			const run = { startedAtMs: T0, durationS: 3600, timeScale: r.runId === 1 ? 1 : 60 };
			const k = `${r.runId}|${seriesBucket(run, r.t)}`;
			expected.set(k, (expected.get(k) ?? 0) + 1);
		}
		expect(new Map(rows.map((r) => [`${r.runId}|${r.bucket}`, r.n]))).toEqual(expected);
		expect(Math.min(...rows.map((r) => r.bucket))).toBe(0);
		expect(Math.max(...rows.map((r) => r.bucket))).toBeLessThan(720);
		const state = db.prepare(`SELECT id, summary_state AS s FROM soak_runs ORDER BY id`).all() as {
			id: number;
			s: string | null;
		}[];
		expect(JSON.parse(state[0].s as string)).toEqual({ readingCount: 360, lastSeq: 3690 });
		expect(state[1].s).toBeNull(); // running: rebuilt by the server on its next use
		db.close();
	});
});
