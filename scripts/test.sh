#!/usr/bin/env bash
# Everything CI checks, in order: setup, formatting, clippy, native tests,
# a minute of fuzzing per target,
# the wasm crate's tests in headless Chromium, the web build (and the CLI
# the page tests compare against), then the page tests. Every check runs
# even when an earlier one failed (except that a failed setup or build stops
# what depends on it); the last line sums the steps up.
set -uo pipefail
cd "$(dirname "$0")/.."
export PATH="$HOME/.cargo/bin:$PATH"
export CHROMEDRIVER="${CHROMEDRIVER:-/usr/bin/chromedriver}"
export WASM_BINDGEN_TEST_TIMEOUT="${WASM_BINDGEN_TEST_TIMEOUT:-300}"
export CARGO_TERM_COLOR=never

passed=0
failed=0
failures=()
step() {
  local name="$1"
  shift
  local start=$SECONDS
  printf '\n=== %s\n' "$name"
  if "$@"; then
    passed=$((passed + 1))
    printf '=== %s: ok (%ds)\n' "$name" $((SECONDS - start))
    return 0
  fi
  failed=$((failed + 1))
  failures+=("$name")
  printf '=== %s: FAILED (%ds)\n' "$name" $((SECONDS - start))
  return 1
}

finish() {
  printf '\n'
  ((failed)) && printf 'failed steps: %s\n' "${failures[*]}"
  printf 'steps: %d passed, %d failed\n' "$passed" "$failed"
  ((failed == 0))
  exit $?
}

step setup bash scripts/setup.sh </dev/null || finish
step fmt cargo fmt --all -- --check
step clippy cargo clippy --workspace --all-targets -- -D warnings
step native-tests cargo test --workspace --no-fail-fast
# A minute of mutation fuzzing per target (need, stock, design, solve,
# analyze; the targets run side by side), release build, fixed seed.
step fuzz env SPANFIT_FUZZ_SECONDS=60 cargo test -p spanfit-optimizer --release --test fuzz
# The optimiser against the exhaustive walk, and the space bound against
# the walk's optima: release only (ignored in the debug run above).
step release-walks cargo test -p spanfit-optimizer --release --test exhaustive_agreement --test space_bound --test swing_floor --test loop_gain_floor
step wasm-browser-tests cargo test -p spanfit-web --target wasm32-unknown-unknown --no-fail-fast
if step build bash -c 'bash scripts/build-web.sh && cargo build --release -p spanfit-cli'; then
  step page-tests node --test --test-concurrency=1 tests/page/
fi
finish
