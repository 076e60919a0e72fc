#!/usr/bin/env bash
# `npm test`: lint, type checks, unit tests and end-to-end tests in Debian's Chromium.
set -euo pipefail
cd "$(dirname "$0")/.."

need_pkgs=()
[ -x /usr/bin/chromium ] || need_pkgs+=(chromium)
command -v sox >/dev/null 2>&1 || need_pkgs+=(sox)
command -v pdftotext >/dev/null 2>&1 || need_pkgs+=(poppler-utils)
if [ ${#need_pkgs[@]} -gt 0 ]; then
	if [ "$(id -u)" = "0" ]; then
		echo "Installing Debian packages the tests use: ${need_pkgs[*]}"
		apt-get update -qq
		DEBIAN_FRONTEND=noninteractive apt-get install -y -qq "${need_pkgs[@]}" >/dev/null
	else
		echo "The tests need Debian's ${need_pkgs[*]}. Install them first:" >&2
		echo "  sudo apt-get update && sudo apt-get install -y ${need_pkgs[*]}" >&2
		exit 1
	fi
fi

[ -d node_modules ] || npm ci --no-audit --no-fund

echo "== lint (Prettier, ESLint)"
npm run --silent lint
echo "== type check (svelte-check)"
npm run --silent check
echo "== unit tests (vitest)"
npx vitest run
echo "== end-to-end tests (Playwright, Debian Chromium)"
npx playwright test
