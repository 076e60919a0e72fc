// Each job's model key (`make/model`, $lib/notebook/model-key) in `job_model_keys`, so the model
// notebook finds a model's jobs by index. Kept small (no framework, no heavy imports): the
// database opener keys every job at start, and the notebook keys jobs added since.
import type Database from 'better-sqlite3';
import { modelKeyString } from '../notebook/model-key';

/**
 * Key every job without a row in `job_model_keys` (a job without a usable make or model gets the
 * empty key, so it is not looked at again). Cheap when nothing is missing: two counts. Returns the
 * number of jobs keyed.
 */
export function syncModelKeys(sqlite: Database.Database): number {
	const { missing } = sqlite
		.prepare('SELECT (SELECT count(*) FROM jobs) - (SELECT count(*) FROM job_model_keys) AS missing')
		.get() as { missing: number };
	if (missing <= 0) return 0;
	const rows = sqlite
		.prepare(
			`SELECT j.id, j.make, j.model FROM jobs j
			 LEFT JOIN job_model_keys k ON k.job_id = j.id WHERE k.job_id IS NULL`
		)
		.all() as { id: number; make: string; model: string }[];
	const insert = sqlite.prepare('INSERT OR IGNORE INTO job_model_keys (job_id, model_key) VALUES (?, ?)');
	sqlite.transaction(() => {
		for (const r of rows) insert.run(r.id, modelKeyString(r.make, r.model) ?? '');
	})();
	return rows.length;
}
