#!/usr/bin/env bash
# Install everything spanfit needs on a fresh Debian machine, idempotently:
# the wasm target, wasm-bindgen-cli 0.2.130, Chromium + chromedriver,
# ngspice, and the npm packages of the page tests (playwright-core,
# binaryen@132 for wasm-opt).
set -euo pipefail
cd "$(dirname "$0")/.."
log() { printf '[setup] %s\n' "$*"; }

if ! rustup target list --installed | grep -q '^wasm32-unknown-unknown$'; then
  log "rustup target add wasm32-unknown-unknown"
  rustup target add wasm32-unknown-unknown
fi
if ! (command -v wasm-bindgen >/dev/null 2>&1 && wasm-bindgen --version | grep -q ' 0.2.130$'); then
  log "cargo install wasm-bindgen-cli 0.2.130 (a few minutes)"
  cargo install wasm-bindgen-cli --version 0.2.130
fi
missing=()
command -v chromium >/dev/null 2>&1 || missing+=(chromium)
command -v chromedriver >/dev/null 2>&1 || missing+=(chromium-driver)
command -v ngspice >/dev/null 2>&1 || missing+=(ngspice)
if ((${#missing[@]})); then
  log "apt-get install ${missing[*]}"
  export DEBIAN_FRONTEND=noninteractive
  apt-get update -qq
  apt-get install -y -qq "${missing[@]}"
fi
if [[ ! -x tests/page/node_modules/.bin/wasm-opt || ! -d tests/page/node_modules/playwright-core ]]; then
  log "npm ci in tests/page"
  (cd tests/page && npm ci --no-audit --no-fund)
fi
log "ready"
