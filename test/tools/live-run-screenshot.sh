#!/usr/bin/env bash
# Regenerates docs/live-run.png, the README's picture of a scheme and its live run side by side: runs the
# real-editor suite (which saves test/out/editor/live-run-dark.png and live-run-light.png, checked for content by
# test/editor/preview.ts) and copies the dark one into docs/. Usage: bash test/tools/live-run-screenshot.sh
set -euo pipefail
cd "$(dirname "$0")/../.."
bash test/tools/editor-test.sh
cp test/out/editor/live-run-dark.png docs/live-run.png
echo "docs/live-run.png updated"
