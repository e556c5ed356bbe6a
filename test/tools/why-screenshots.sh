#!/usr/bin/env bash
# Regenerates docs/frequency-map.png and docs/influence-map.png, the pictures of the live run's frequency map and
# influence map: runs the real-editor suite (test/editor/why.ts saves test/out/editor/frequency-map.png and
# influence-map.png after checking them for content) and copies them into docs/.
# Usage: flock /tmp/fluxel-editor.lock bash test/tools/why-screenshots.sh
#        (or with SKIP_RUN=1 to copy the pictures of the last run without running the suite again)
set -euo pipefail
cd "$(dirname "$0")/../.."
if [ "${SKIP_RUN:-0}" != "1" ]; then bash test/tools/editor-test.sh; fi
for name in frequency-map influence-map; do
  cp "test/out/editor/$name.png" "docs/$name.png"
  echo "docs/$name.png updated"
done
