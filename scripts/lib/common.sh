#!/usr/bin/env bash
# Shared by start.sh and test.sh: settings, the auth secret, and process bookkeeping.
ROOT="$(cd "$(dirname "${BASH_SOURCE[0]}")/../.." && pwd)"
cd "$ROOT"
source scripts/lib/postgres.sh
source scripts/lib/ensure-deps.sh

# Print a secret kept in .local/<name> (outside git), generating it first with the node
# expression given when the file is missing or empty.
local_secret() {
  local file=".local/$1" generate="$2"
  mkdir -p .local
  if [[ ! -s "$file" ]]; then
    node -e "process.stdout.write($generate)" > "$file"
    chmod 600 "$file"
  fi
  cat "$file"
}
RANDOM_32="require('node:crypto').randomBytes(32).toString('base64url')"

# The session signing secret, reused across starts.
ensure_auth_secret() {
  BETTER_AUTH_SECRET="$(local_secret auth-secret "$RANDOM_32")"
  export BETTER_AUTH_SECRET
}

# The key that encrypts organisation signing keys at rest, kept outside the database too (a
# dump alone must not be able to sign a device configuration).
ensure_key_encryption_key() {
  FLYBALL_KEY_ENCRYPTION_KEY="${FLYBALL_KEY_ENCRYPTION_KEY:-$(local_secret key-encryption-key "$RANDOM_32")}"
  export FLYBALL_KEY_ENCRYPTION_KEY
}

# The secret webhooks from the local Stripe are signed with; the fake reads the same file (or
# STRIPE_WEBHOOK_SECRET).
ensure_stripe_webhook_secret() {
  STRIPE_WEBHOOK_SECRET="${STRIPE_WEBHOOK_SECRET:-$(local_secret stripe-webhook-secret "'whsec_' + require('node:crypto').randomBytes(24).toString('base64url')")}"
  export STRIPE_WEBHOOK_SECRET
}

CHILD_PIDS=()
start_child() {
  local name="$1"; shift
  "$@" > >(sed -u "s/^/[$name] /") 2>&1 &
  CHILD_PIDS+=("$!")
}

stop_children() {
  local pid
  for pid in "${CHILD_PIDS[@]}"; do kill -TERM "$pid" 2>/dev/null || true; done
  for pid in "${CHILD_PIDS[@]}"; do wait "$pid" 2>/dev/null || true; done
  CHILD_PIDS=()
}

wait_for_http() {
  local url="$1" seconds="${2:-60}" i
  for ((i = 0; i < seconds * 4; i++)); do
    if curl -fsS -o /dev/null "$url" 2>/dev/null; then return 0; fi
    sleep 0.25
  done
  echo "Timed out waiting for $url" >&2
  return 1
}
