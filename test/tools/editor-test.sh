#!/usr/bin/env bash
# The real-editor layer: installs the editor (cached), packages the .vsix, runs test/editor in code-server.
# Prints "editor: N passed, N failed" (from the driver). Usage: bash test/tools/editor-test.sh
set -uo pipefail
cd "$(dirname "$0")/../.."
CACHE=$(bash test/tools/editor-install.sh | tail -n 1) || { echo "editor: 0 passed, 1 failed (editor install failed)"; exit 1; }
node test/tools/editor-package.mjs 2>&1 | grep -E "^(package|dist/)" || { echo "editor: 0 passed, 1 failed (packaging failed)"; exit 1; }
timeout 900 node test/tools/editor-test.mjs --cache "$CACHE"
