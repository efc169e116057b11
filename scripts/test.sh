#!/usr/bin/env bash
# Every test of spanfit: set-up, format and lint, native tests (core, CLI,
# ngspice cross-checks), the wasm bindings in headless Chromium, the page
# build, and the page tests in headless Chromium.
set -euo pipefail
cd "$(dirname "$0")/.."
bash scripts/setup.sh
log() { printf '\n[test] %s\n' "$*"; }

log "cargo fmt --check"
cargo fmt --all -- --check
log "cargo clippy (workspace, all targets, -D warnings)"
cargo clippy --workspace --all-targets -- -D warnings
log "native tests"
cargo test --workspace --release
if [[ -d web/tests ]]; then
  log "wasm-bindgen tests in headless Chromium"
  CHROMEDRIVER=/usr/bin/chromedriver WASM_BINDGEN_TEST_TIMEOUT=120 \
    cargo test -p spanfit-web --target wasm32-unknown-unknown
fi
log "build the page"
bash scripts/build-web.sh
log "page tests (playwright-core, Debian Chromium)"
(cd tests/page && node --test)
log "all tests passed"
