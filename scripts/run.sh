#!/usr/bin/env bash
# The main job: set up, build the page, serve it on 127.0.0.1 and print the
# URL (the demo need and stock load by default).
set -euo pipefail
cd "$(dirname "$0")/.."
bash scripts/setup.sh
bash scripts/build-web.sh
port="${PORT:-8765}"
echo "spanfit is at http://127.0.0.1:${port}/ (demo loaded; Ctrl-C stops)"
exec python3 -m http.server "$port" --bind 127.0.0.1 --directory web/dist
