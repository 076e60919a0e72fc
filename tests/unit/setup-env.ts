// Vitest setup for every test file: the app's `db` (from $lib/server/db) opens a private
// in-memory database, so tests never touch data/benchlight.db.
process.env.DATABASE_URL = ':memory:';
// Routes that sign bridge tokens need a secret; a fixed test value (not used anywhere real).
process.env.BRIDGE_SECRET ??= 'test-only-bridge-secret-0123456789abcdef';
