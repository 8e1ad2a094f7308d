#!/usr/bin/env bash
# Install npm dependencies when node_modules is missing or older than the lock file.
ensure_node_modules() {
  local marker=node_modules/.package-lock.json
  if [[ ! -f "$marker" || package-lock.json -nt "$marker" ]]; then
    echo "Installing npm dependencies…"
    # --include=dev: the build and the scripts need the dev tools even when NODE_ENV=production
    # (npm start exports it, and npm would then leave devDependencies out).
    npm ci --include=dev --no-audit --no-fund --loglevel=error
  fi
}
