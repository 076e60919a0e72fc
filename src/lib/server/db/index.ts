// The app's one database handle. During `vite build` an in-memory database stands in so
// analysing routes creates no files.
import { building } from '$app/environment';
import { env } from '../env';
import { openDb } from './open';
import * as table from './schema';

export const db = building ? openDb(':memory:', { migrate: false }) : openDb(env.DATABASE_URL);
export { table };
