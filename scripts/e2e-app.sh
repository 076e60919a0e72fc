#!/usr/bin/env bash
# Serves the app for the e2e run on a fresh, migrated and seeded database. The build is the
# shared content-addressed one (build/<hash>/): reused when the sources are unchanged, never
# rebuilt under an `npm start` running from this checkout.
set -euo pipefail
cd "$(dirname "$0")/.."
: "${DATABASE_URL:?DATABASE_URL must name the e2e database}"
# Only the e2e database itself: never the folder, which may hold other databases (data/).
rm -f "$DATABASE_URL" "$DATABASE_URL-wal" "$DATABASE_URL-shm" "$DATABASE_URL-journal"
# This shell's pid is the server's after `exec`, so the build is marked used by the server.
dir=$(node scripts/build.mjs --owner $$)
npx tsx scripts/seed.ts
exec node scripts/serve.mjs "$dir"
