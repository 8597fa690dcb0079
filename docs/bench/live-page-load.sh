#!/bin/sh
# Time to a drawn live page (docs/drift.md, "Why the charts are still hand-drawn SVG"), two page builds
# alternating in one run: each folder holds an index.html and the state.json it is served as /api/state.
# A measuring page loads index.html in an iframe and reports, from its own start, when the page's body
# gets data-ready (set after the first refresh has drawn everything); a fresh headless chromium each load.
# Usage: docs/bench/live-page-load.sh <folder A> <folder B> [pairs, default 8]
# e.g. A: git show <commit>:connectors/src/main/resources/dev/runnel/connect/web/index.html > A/index.html,
#      A/state.json and B/state.json saved from /api/state (LiveViewBrowserTest writes connectors/target/live-state.json).
# Prints one line per load: the folder and the milliseconds to ready. Needs python3 and chromium; no network.
set -e
A=$(cd "$1" && pwd); B=$(cd "$2" && pwd); PAIRS=${3:-8}
WORK=$(mktemp -d); LOG=$WORK/log.txt; : > "$LOG"
cat > "$WORK/serve.py" <<'PY'
import http.server, sys, urllib.parse
root, port, log = sys.argv[1], int(sys.argv[2]), open(sys.argv[3], 'a')
MEASURE = b'''<!DOCTYPE html><html><body><script>
const t0 = performance.now();
const f = document.createElement("iframe"); f.width = 1280; f.height = 1400; document.body.appendChild(f); f.src = "index.html";
const iv = setInterval(() => { const b = f.contentDocument && f.contentDocument.body;
  if (b && b.getAttribute("data-ready")) { clearInterval(iv); fetch("/report?ready_ms=" + (performance.now() - t0).toFixed(0)); } }, 2);
</script></body></html>'''
class H(http.server.SimpleHTTPRequestHandler):
    def __init__(self, *a, **k): super().__init__(*a, directory=root, **k)
    def log_message(self, *a): pass
    def do_GET(self):
        u = urllib.parse.urlparse(self.path)
        if u.path == '/report':
            log.write(root + ' ' + u.query + '\n'); log.flush(); self.send_response(204); self.end_headers(); return
        if u.path == '/measure.html':
            self.send_response(200); self.send_header('Content-Type', 'text/html'); self.end_headers(); self.wfile.write(MEASURE); return
        if u.path == '/api/state':
            self.path = '/state.json'
        return super().do_GET()
http.server.ThreadingHTTPServer(('127.0.0.1', port), H).serve_forever()
PY
python3 "$WORK/serve.py" "$A" 18771 "$LOG" & PA=$!
python3 "$WORK/serve.py" "$B" 18772 "$LOG" & PB=$!
sleep 1
uptime
load() {
  prof=$(mktemp -d)
  timeout 15 chromium --headless --no-sandbox --disable-gpu --no-first-run --disable-background-networking \
    --disable-component-update --disable-sync --disable-dev-shm-usage --user-data-dir="$prof" --window-size=1400,1500 \
    "http://127.0.0.1:$1/measure.html" >/dev/null 2>&1 || true
  rm -rf "$prof"
}
i=0
while [ $i -lt "$PAIRS" ]; do
  if [ $((i % 2)) -eq 0 ]; then load 18771; load 18772; else load 18772; load 18771; fi
  i=$((i + 1))
done
uptime
kill $PA $PB
cat "$LOG"
rm -rf "$WORK"
