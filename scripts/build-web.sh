#!/usr/bin/env bash
# Build the page: the wasm crate (release), wasm-bindgen glue (no-modules
# for the page and its workers, ES module for reuse), wasm-opt from npm
# binaryen@132, then web/bundle.mjs writes web/dist/ (the page's ES modules
# from web/www/js as they are) and the single file web/dist/spanfit.html
# (those modules joined into one inline script; plain Node, no bundler).
#   WASM_OPT_LEVEL   wasm-opt level (default -O3; -Oz for the smallest file)
#   SKIP_WASM_OPT=1  leave the wasm unoptimised (faster builds while editing)
set -euo pipefail
cd "$(dirname "$0")/.."

log() { printf '[build-web] %s\n' "$*"; }

need() {
  command -v "$1" >/dev/null 2>&1 || { echo "build-web: '$1' not found; run scripts/setup.sh" >&2; exit 1; }
}
need cargo
need wasm-bindgen
need node

WASM_BINDGEN_WANT=0.2.130
if ! wasm-bindgen --version | grep -q " ${WASM_BINDGEN_WANT}\$"; then
  echo "build-web: wasm-bindgen ${WASM_BINDGEN_WANT} is needed (found: $(wasm-bindgen --version)); run scripts/setup.sh" >&2
  exit 1
fi

log "cargo build (release, wasm32-unknown-unknown)"
cargo build -p spanfit-web --release --target wasm32-unknown-unknown
raw=target/wasm32-unknown-unknown/release/spanfit_web.wasm

rm -rf web/pkg
mkdir -p web/pkg
log "wasm-bindgen"
wasm-bindgen --target no-modules --no-typescript --out-dir web/pkg/nomodules "$raw"
wasm-bindgen --target web --no-typescript --out-dir web/pkg/web "$raw"
if ! cmp -s web/pkg/nomodules/spanfit_web_bg.wasm web/pkg/web/spanfit_web_bg.wasm; then
  echo "build-web: the two wasm-bindgen targets produced different wasm; the page assumes one file serves both" >&2
  exit 1
fi

if [[ "${SKIP_WASM_OPT:-0}" == 1 ]]; then
  log "wasm-opt skipped"
  cp web/pkg/nomodules/spanfit_web_bg.wasm web/pkg/spanfit_web_bg.wasm
else
  wasm_opt=tests/page/node_modules/.bin/wasm-opt
  if [[ ! -x "$wasm_opt" ]]; then
    echo "build-web: $wasm_opt missing; run scripts/setup.sh (npm binaryen@132 in tests/page)" >&2
    exit 1
  fi
  log "wasm-opt ${WASM_OPT_LEVEL:--O3} ($("$wasm_opt" --version))"
  "$wasm_opt" "${WASM_OPT_LEVEL:--O3}" \
    --enable-bulk-memory --enable-mutable-globals --enable-nontrapping-float-to-int \
    --enable-sign-ext --enable-reference-types --enable-multivalue \
    web/pkg/nomodules/spanfit_web_bg.wasm -o web/pkg/spanfit_web_bg.wasm
fi

log "bundle"
node web/bundle.mjs
