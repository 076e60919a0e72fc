#!/usr/bin/env bash
# Builds the app and serves it on a fresh, migrated and seeded database for the e2e run.
set -euo pipefail
cd "$(dirname "$0")/.."
rm -rf "$(dirname "$DATABASE_URL")"
npx vite build --logLevel warn
npx tsx scripts/seed.ts
exec node build
