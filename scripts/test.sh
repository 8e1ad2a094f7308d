#!/usr/bin/env bash
# npm test: a fresh PostgreSQL of its own, Vitest (unit + integration against the real
# database), then Playwright end-to-end against the built app in Debian's Chromium.
# Ends with one line "N passed, N failed" summing both runners.
set -uo pipefail
source "$(dirname "$0")/lib/common.sh"

export TEST_PG_PORT="${TEST_PG_PORT:-54339}"
export TEST_APP_PORT="${TEST_APP_PORT:-3100}"
export RESEND_FAKE_PORT="${TEST_RESEND_PORT:-3035}"
export DATABASE_URL="postgres://flyball@127.0.0.1:$TEST_PG_PORT/flyball"
export RESEND_BASE_URL="http://127.0.0.1:$RESEND_FAKE_PORT"
export RESEND_FAKE_DIR="$ROOT/data/test-resend-$RESEND_FAKE_PORT"
export STRIPE_FAKE_PORT="${TEST_STRIPE_PORT:-3036}"
export STRIPE_BASE_URL="http://127.0.0.1:$STRIPE_FAKE_PORT"
export STRIPE_FAKE_DIR="$ROOT/data/test-stripe-$STRIPE_FAKE_PORT"
export STRIPE_SECRET_KEY="sk_test_flyball_tests"
export STRIPE_WEBHOOK_SECRET="whsec_test_secret_not_for_production"
export STRIPE_WEBHOOK_URL="http://127.0.0.1:$TEST_APP_PORT/api/webhooks/stripe"
export BETTER_AUTH_URL="http://127.0.0.1:$TEST_APP_PORT"
export TRUSTED_ORIGINS="http://localhost:$TEST_APP_PORT"
export BETTER_AUTH_SECRET="test-secret-not-for-production-0123456789abcdef"
export FLYBALL_KEY_ENCRYPTION_KEY="dGVzdC1rZXktZW5jcnlwdGlvbi1rZXktMzItYnl0ZXM"
# Sign-in and e-mail limits are off for the suite (tests sign in hundreds of times from one
# address); tests/integration/attempt-limits.test.ts runs an app instance with them on.
export FLYBALL_DISABLE_RATE_LIMIT=1
DATA_DIR="$ROOT/data/test-postgres-$TEST_PG_PORT"
REPORTS="$ROOT/data/test-reports-$TEST_APP_PORT"
export FLYBALL_BUILD_DIR="${FLYBALL_BUILD_DIR:-build}"
# `npm test -- --vitest [vitest args]` runs only Vitest (for a quick loop while developing).
ONLY_VITEST=0
if [[ "${1:-}" == "--vitest" ]]; then ONLY_VITEST=1; shift; fi

ensure_node_modules || exit 1

echo "Type-checking…"
node_modules/.bin/react-router typegen >/dev/null 2>&1 && node_modules/.bin/tsc || { echo "Type errors: fix them first (npm run typecheck)." >&2; exit 1; }

if [[ ! -x /usr/bin/chromium ]]; then
  if [[ "$(id -u)" -eq 0 ]] && command -v apt-get >/dev/null; then
    echo "Installing Debian's Chromium for the end-to-end tests…"
    DEBIAN_FRONTEND=noninteractive apt-get update -qq >/dev/null && DEBIAN_FRONTEND=noninteractive apt-get install -y -qq chromium >/dev/null
  else
    echo "Chromium is missing: sudo apt-get install chromium" >&2
  fi
fi

cleanup() {
  stop_children
  pg_stop "$DATA_DIR"
}
trap cleanup EXIT INT TERM

pg_stop "$DATA_DIR"
rm -rf "$DATA_DIR" "$RESEND_FAKE_DIR" "$STRIPE_FAKE_DIR" "$REPORTS"
mkdir -p "$REPORTS"
echo "Starting a fresh test PostgreSQL on 127.0.0.1:$TEST_PG_PORT…"
pg_ensure_running "$DATA_DIR" "$TEST_PG_PORT" off || exit 1
# The local Stripe before the seed, which subscribes the demo organisations on it.
start_child stripe node_modules/.bin/tsx fakes/stripe/server.ts
wait_for_http "$STRIPE_BASE_URL/" 60 || exit 1
node_modules/.bin/tsx scripts/migrate.ts || exit 1
node_modules/.bin/tsx scripts/seed.ts || exit 1

start_child mail node_modules/.bin/tsx fakes/resend/server.ts
wait_for_http "$RESEND_BASE_URL/api/messages" 60 || exit 1

echo "Building the app…"
node_modules/.bin/react-router build >"$REPORTS/build.log" 2>&1 || { cat "$REPORTS/build.log"; exit 1; }
start_child app env NODE_ENV=production PORT="$TEST_APP_PORT" HOST=127.0.0.1 node scripts/serve.js "$FLYBALL_BUILD_DIR/server/index.js"
wait_for_http "http://127.0.0.1:$TEST_APP_PORT/" 120 || exit 1
export APP_URL="http://127.0.0.1:$TEST_APP_PORT"
# The job worker: Stripe's webhooks and the billing quantity are applied by jobs.
start_child worker node_modules/.bin/tsx scripts/worker.ts

echo "Running Vitest…"
node_modules/.bin/vitest run --reporter=default --reporter=json --outputFile.json="$REPORTS/vitest.json" "$@"
vitest_status=$?
if [[ $ONLY_VITEST -eq 1 ]]; then exit $vitest_status; fi

echo "Running Playwright…"
PLAYWRIGHT_JSON_OUTPUT_NAME="$REPORTS/playwright.json" node_modules/.bin/playwright test -c tests/e2e/playwright.config.ts --reporter=list,json
playwright_status=$?

node --input-type=module -e '
import { readFileSync, existsSync } from "node:fs";
const dir = process.argv[1];
let passed = 0, failed = 0, skipped = 0;
const v = `${dir}/vitest.json`;
if (existsSync(v)) {
  const r = JSON.parse(readFileSync(v, "utf8"));
  passed += r.numPassedTests; failed += r.numFailedTests; skipped += r.numPendingTests + (r.numTodoTests ?? 0);
  // A test file that fails to load has no failed test of its own: count it once.
  failed += r.testResults.filter((f) => f.status === "failed" && !f.assertionResults.some((a) => a.status === "failed")).length;
} else failed += 1;
const p = `${dir}/playwright.json`;
if (existsSync(p)) {
  const s = JSON.parse(readFileSync(p, "utf8")).stats;
  passed += s.expected + (s.flaky ?? 0); failed += s.unexpected; skipped += s.skipped;
} else failed += 1;
console.log(`${passed} passed, ${failed} failed${skipped ? `, ${skipped} skipped` : ""}`);
' "$REPORTS"

if [[ $vitest_status -ne 0 || $playwright_status -ne 0 ]]; then exit 1; fi
exit 0
