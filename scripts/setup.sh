#!/usr/bin/env bash
# One-time set-up on a fresh machine (idempotent; quick when everything is already there):
# the system libraries that `canvas` (under chartjs-node-canvas) needs to build from source,
# Debian's PostgreSQL server (the tests of the PostgreSQL backend start a throwaway cluster of
# their own with it; the app itself needs none unless KOLMO_DATABASE_URL is set), then the npm
# dependencies from the lock file, then the TypeScript build (npm's `prepare`).
set -euo pipefail
cd "$(dirname "$0")/.."

need_apt=0
for lib in cairo pangocairo libjpeg librsvg-2.0; do
  pkg-config --exists "$lib" 2>/dev/null || need_apt=1
done
[ -f /usr/include/gif_lib.h ] || need_apt=1
need_pg=0
if [ -z "${KOLMO_TEST_DATABASE_URL:-}" ] && ! ls /usr/lib/postgresql/*/bin/initdb >/dev/null 2>&1 && ! command -v initdb >/dev/null 2>&1; then
  need_pg=1
fi
SUDO=""
[ "$(id -u)" = 0 ] || SUDO="sudo"
if [ "$need_apt" = 1 ] || [ "$need_pg" = 1 ]; then
  $SUDO apt-get update -qq
fi
if [ "$need_apt" = 1 ]; then
  echo "kolmo setup: installing the system libraries canvas builds against" >&2
  DEBIAN_FRONTEND=noninteractive $SUDO apt-get install -y -qq \
    build-essential pkg-config python3 \
    libcairo2-dev libpango1.0-dev libjpeg-dev libgif-dev librsvg2-dev fonts-dejavu-core >/dev/null
fi
if [ "$need_pg" = 1 ]; then
  echo "kolmo setup: installing Debian's PostgreSQL server (for the tests of the PostgreSQL backend)" >&2
  DEBIAN_FRONTEND=noninteractive $SUDO apt-get install -y -qq postgresql >/dev/null
fi

# Install from the lock file when node_modules is missing or older than the lock file.
if [ ! -d node_modules ] || [ package-lock.json -nt node_modules/.package-lock.json ]; then
  npm ci --no-audit --no-fund
else
  npm run --silent build
fi
