#!/usr/bin/env bash
# Install what the build and the tests need, on a fresh Debian machine of
# this project's kind; each step is skipped when its tool is already there,
# so running it again costs seconds.
#   - the wasm32-unknown-unknown target for the machine's Rust toolchain
#   - wasm-bindgen-cli 0.2.130 (must match the wasm-bindgen crate pin)
#   - Debian's chromium, chromium-driver and ngspice
#   - npm packages in tests/page: playwright-core, axe-core (accessibility
#     checks in the page tests) and binaryen@132 (wasm-opt)
set -euo pipefail
cd "$(dirname "$0")/.."
export PATH="$HOME/.cargo/bin:$PATH"

log() { printf '[setup] %s\n' "$*"; }

command -v cargo >/dev/null || { echo "setup: cargo not found; this project needs the machine's Rust toolchain" >&2; exit 1; }

if rustup target list --installed 2>/dev/null | grep -qx wasm32-unknown-unknown; then
  log "wasm32-unknown-unknown: present"
else
  log "adding the wasm32-unknown-unknown target"
  rustup target add wasm32-unknown-unknown
fi

WASM_BINDGEN_VERSION=0.2.130
if wasm-bindgen --version 2>/dev/null | grep -q " ${WASM_BINDGEN_VERSION}\$"; then
  log "wasm-bindgen ${WASM_BINDGEN_VERSION}: present"
else
  log "installing wasm-bindgen-cli ${WASM_BINDGEN_VERSION} (several minutes on two cores)"
  cargo install wasm-bindgen-cli --version "${WASM_BINDGEN_VERSION}"
fi

apt_missing=()
[[ -x /usr/bin/chromium ]] || apt_missing+=(chromium)
[[ -x /usr/bin/chromedriver ]] || apt_missing+=(chromium-driver)
command -v ngspice >/dev/null || apt_missing+=(ngspice)
command -v node >/dev/null || apt_missing+=(nodejs)
command -v npm >/dev/null || apt_missing+=(npm)
if ((${#apt_missing[@]})); then
  sudo=()
  [[ "$(id -u)" -eq 0 ]] || sudo=(sudo)
  log "apt-get install ${apt_missing[*]}"
  "${sudo[@]}" apt-get update
  DEBIAN_FRONTEND=noninteractive "${sudo[@]}" apt-get install -y --no-install-recommends "${apt_missing[@]}"
else
  log "chromium, chromium-driver, ngspice, node: present"
fi

lock=tests/page/package-lock.json
installed=tests/page/node_modules/.package-lock.json
if [[ -x tests/page/node_modules/.bin/wasm-opt && -f tests/page/node_modules/playwright-core/package.json && -f tests/page/node_modules/axe-core/axe.min.js \
  && -f "$installed" && ! "$lock" -nt "$installed" ]]; then
  log "npm packages in tests/page: present"
else
  log "npm ci in tests/page"
  (cd tests/page && npm ci --no-audit --no-fund)
fi
log "done"
