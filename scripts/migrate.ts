// `npm run db:migrate`: open DATABASE_URL (default data/benchlight.db), which applies the
// committed migrations in drizzle/.
import { openDb } from '../src/lib/server/db/open';
import { env } from '../src/lib/server/env';

const db = openDb(env.DATABASE_URL);
const row = db.$client.prepare('SELECT count(*) AS n FROM __drizzle_migrations').get() as { n: number };
console.log(`${env.DATABASE_URL}: ${row.n} migrations applied.`);
db.$client.close();
