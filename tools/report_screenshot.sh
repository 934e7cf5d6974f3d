#!/usr/bin/env bash
# Remake docs/report-demo.png, the README's picture of the demo's HTML report, with the
# headless Chromium the tests use (networking disabled).
set -eu
T=$(mktemp -d); trap 'rm -rf "$T"' EXIT
./sturdy demo -o "$T/demo.html"
chromium --headless --no-sandbox --disable-gpu --hide-scrollbars --user-data-dir="$T/p" \
    --proxy-server=127.0.0.1:9 --host-resolver-rules="MAP * ~NOTFOUND" \
    --window-size=900,2700 --screenshot="$T/shot.png" "file://$T/demo.html" 2>/dev/null
mv "$T/shot.png" docs/report-demo.png
echo "docs/report-demo.png"
