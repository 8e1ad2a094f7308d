#!/usr/bin/env bash
# Install npm dependencies when node_modules is missing or older than the lock file.
ensure_node_modules() {
  local marker=node_modules/.package-lock.json
  if [[ ! -f "$marker" || package-lock.json -nt "$marker" ]]; then
    echo "Installing npm dependencies…"
    npm ci --no-audit --no-fund --loglevel=error
  fi
}
