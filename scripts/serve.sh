#!/usr/bin/env bash
# Serve web/dist on 127.0.0.1 (PORT, default 8640) in the foreground, with
# application/wasm for .wasm files. Build first with scripts/build-web.sh.
set -euo pipefail
cd "$(dirname "$0")/.."
PORT="${PORT:-8640}"
[[ -f web/dist/index.html ]] || { echo "serve: web/dist is not built; run scripts/build-web.sh" >&2; exit 1; }
echo "spanfit page: http://127.0.0.1:${PORT}/   (the demo need and stock are loaded; press 'Design it')"
echo "single file:  file://$(pwd)/web/dist/spanfit.html"
exec python3 - "$PORT" <<'PY'
import functools, http.server, sys
port = int(sys.argv[1])
class Handler(http.server.SimpleHTTPRequestHandler):
    extensions_map = {
        **http.server.SimpleHTTPRequestHandler.extensions_map,
        ".wasm": "application/wasm", ".js": "text/javascript", ".mjs": "text/javascript",
        ".css": "text/css", ".html": "text/html", ".svg": "image/svg+xml", ".json": "application/json",
    }
    def end_headers(self):
        self.send_header("Cache-Control", "no-store")
        super().end_headers()
handler = functools.partial(Handler, directory="web/dist")
with http.server.ThreadingHTTPServer(("127.0.0.1", port), handler) as server:
    server.serve_forever()
PY
