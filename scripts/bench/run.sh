#!/usr/bin/env bash
# npm run bench: every scripts/bench/*-bench.ts in turn (each prints its own figures).
set -uo pipefail
cd "$(dirname "$0")/../.."
# A throwaway key-encryption key for the bench's own database.
export FLYBALL_KEY_ENCRYPTION_KEY="${FLYBALL_KEY_ENCRYPTION_KEY:-$(node -e "process.stdout.write(require('node:crypto').randomBytes(32).toString('base64url'))")}"
status=0
for bench in scripts/bench/*-bench.ts; do
  echo "=== $(basename "$bench" .ts) ==="
  node_modules/.bin/tsx "$bench" "$@" || status=1
done
exit $status
