#!/usr/bin/env bash
# Shared by start.sh and test.sh: settings, the auth secret, and process bookkeeping.
ROOT="$(cd "$(dirname "${BASH_SOURCE[0]}")/../.." && pwd)"
cd "$ROOT"
source scripts/lib/postgres.sh
source scripts/lib/ensure-deps.sh

# A generated auth secret, kept outside git and reused across starts.
ensure_auth_secret() {
  mkdir -p .local
  if [[ ! -s .local/auth-secret ]]; then
    node -e "process.stdout.write(require('node:crypto').randomBytes(32).toString('base64url'))" > .local/auth-secret
    chmod 600 .local/auth-secret
  fi
  BETTER_AUTH_SECRET="$(cat .local/auth-secret)"
  export BETTER_AUTH_SECRET
}

# The key that encrypts organisation signing keys at rest: generated once, kept outside git and
# outside the database (a dump alone must not be able to sign a device configuration).
ensure_key_encryption_key() {
  mkdir -p .local
  if [[ ! -s .local/key-encryption-key ]]; then
    node -e "process.stdout.write(require('node:crypto').randomBytes(32).toString('base64url'))" > .local/key-encryption-key
    chmod 600 .local/key-encryption-key
  fi
  FLYBALL_KEY_ENCRYPTION_KEY="${FLYBALL_KEY_ENCRYPTION_KEY:-$(cat .local/key-encryption-key)}"
  export FLYBALL_KEY_ENCRYPTION_KEY
}

# The secret webhooks from the local Stripe are signed with: generated once, kept outside git;
# the fake reads the same file (or STRIPE_WEBHOOK_SECRET).
ensure_stripe_webhook_secret() {
  mkdir -p .local
  if [[ ! -s .local/stripe-webhook-secret ]]; then
    node -e "process.stdout.write('whsec_' + require('node:crypto').randomBytes(24).toString('base64url'))" > .local/stripe-webhook-secret
    chmod 600 .local/stripe-webhook-secret
  fi
  STRIPE_WEBHOOK_SECRET="${STRIPE_WEBHOOK_SECRET:-$(cat .local/stripe-webhook-secret)}"
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
