#!/usr/bin/env bash
# npm start: install what is missing, start PostgreSQL, migrate, seed the demo, build, and
# serve the app with its fakes (and worker and simulator). Ctrl-C stops everything.
set -euo pipefail
source "$(dirname "$0")/lib/common.sh"

export HOST="${HOST:-127.0.0.1}"
export PORT="${PORT:-3000}"
export PGPORT_FLYBALL="${FLYBALL_PG_PORT:-54329}"
export RESEND_FAKE_PORT="${RESEND_FAKE_PORT:-3025}"
export STRIPE_FAKE_PORT="${STRIPE_FAKE_PORT:-3026}"
export NODE_ENV=production
export DATABASE_URL="${DATABASE_URL:-postgres://flyball@127.0.0.1:$PGPORT_FLYBALL/flyball}"
export BETTER_AUTH_URL="${BETTER_AUTH_URL:-http://$HOST:$PORT}"
export TRUSTED_ORIGINS="${TRUSTED_ORIGINS:-http://localhost:$PORT,http://127.0.0.1:$PORT}"
export RESEND_BASE_URL="http://127.0.0.1:$RESEND_FAKE_PORT"
export RESEND_FAKE_DIR="$ROOT/data/resend"
export STRIPE_BASE_URL="http://127.0.0.1:$STRIPE_FAKE_PORT"
export STRIPE_SECRET_KEY="${STRIPE_SECRET_KEY:-sk_test_flyball_local}"
export STRIPE_FAKE_DIR="$ROOT/data/stripe"
export STRIPE_WEBHOOK_URL="${STRIPE_WEBHOOK_URL:-http://$HOST:$PORT/api/webhooks/stripe}"
DATA_DIR="$ROOT/data/postgres"

ensure_node_modules
ensure_auth_secret
ensure_key_encryption_key
ensure_stripe_webhook_secret

echo "Starting PostgreSQL on 127.0.0.1:$PGPORT_FLYBALL…"
pg_ensure_running "$DATA_DIR" "$PGPORT_FLYBALL" on

STOPPING=""
shutdown() {
  trap - INT TERM EXIT
  STOPPING=1
  echo
  echo "Stopping Flyball…"
  stop_children
  pg_stop "$DATA_DIR"
  echo "Stopped."
}
trap shutdown INT TERM EXIT

# The local Stripe first: the seed puts the demo organisations' subscriptions on it.
start_child stripe node_modules/.bin/tsx fakes/stripe/server.ts
wait_for_http "$STRIPE_BASE_URL/" 60
npx tsx scripts/migrate.ts
npx tsx scripts/seed.ts
echo "Building the app…"
mkdir -p data
npx react-router build >data/build.log 2>&1 || { cat data/build.log >&2; exit 1; }

start_child mail node_modules/.bin/tsx fakes/resend/server.ts
start_child app node scripts/serve.js build/server/index.js
wait_for_http "http://127.0.0.1:$RESEND_FAKE_PORT/api/messages" 60
wait_for_http "http://$HOST:$PORT/" 120
for extra in scripts/worker.ts scripts/simulate.ts; do
  if [[ -f "$extra" ]]; then start_child "$(basename "$extra" .ts)" node_modules/.bin/tsx "$extra"; fi
done

cat <<TEXT

  Flyball is running at  http://$HOST:$PORT/
  Local e-mail inbox at  http://127.0.0.1:$RESEND_FAKE_PORT/
  Local payments at      $STRIPE_BASE_URL/

  Demo sign-ins (password: flyball-demo)
    owner@corvid.example       owner, Corvid Thermal Machines (/o/corvid)
    admin@corvid.example       admin
    engineer@corvid.example    engineer
    engineer2@corvid.example   engineer
    viewer@corvid.example      viewer
    manager@halden.example     site manager of Halden Plastics' sites
    owner@pellworth.example    owner, Pellworth Pumps (/o/pellworth)
    engineer@pellworth.example engineer, Pellworth Pumps

  Press Ctrl-C to stop.
TEXT

wait -n "${CHILD_PIDS[@]}" || true
if [[ -z "$STOPPING" ]]; then
  echo "A Flyball process exited; shutting down." >&2
  shutdown
fi
