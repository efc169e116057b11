#!/usr/bin/env bash
# Install what is missing, build the page, and serve it on 127.0.0.1 in the
# foreground (Ctrl-C stops it). PORT picks the port (default 8640).
set -euo pipefail
cd "$(dirname "$0")/.."
bash scripts/setup.sh
bash scripts/build-web.sh
exec bash scripts/serve.sh
