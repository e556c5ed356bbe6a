#!/usr/bin/env bash
# Runs every test layer of Fluxel on a fresh Debian machine (as root), installing what it needs first.
# This is the README's test command; .ci/run runs exactly this. Each layer prints one plain
# "N passed, N failed" line; the script exits non-zero if any layer failed.
set -u
cd "$(dirname "$0")/../.."
ROOT=$(pwd)
OUT="$ROOT/test/out"
mkdir -p "$OUT"
status=0

say() { printf '\n=== %s\n' "$*"; }

# 1. System packages: Debian's Python with the reference libraries (called by path as /usr/bin/python3), and gcc.
APT_PACKAGES="python3 python3-numpy python3-scipy python3-skimage python3-pil python3-dask python3-distributed python3-sympy gcc"
missing=""
for p in $APT_PACKAGES; do dpkg -s "$p" >/dev/null 2>&1 || missing="$missing $p"; done
if [ -n "$missing" ]; then
  say "installing Debian packages:$missing"
  export DEBIAN_FRONTEND=noninteractive
  apt-get update -qq && apt-get install -y -qq $missing >/dev/null || { echo "apt-get install failed"; exit 1; }
fi

# 2. The project's own dependencies, exactly as locked.
say "npm ci"
npm ci --no-audit --no-fund --loglevel=error || { echo "npm ci failed"; exit 1; }

# 3. Build (the CLI tests run the bundle).
say "build"
npm run --silent build || { echo "build: 0 passed, 1 failed"; exit 1; }

# One vitest layer: runs the given folders, prints "<layer>: N passed, N failed" from vitest's JSON report.
layer() {
  local name=$1; shift
  say "layer: $name"
  rm -f "$OUT/$name.json"
  timeout 2400 npx vitest run "$@" --reporter=default --reporter=json --outputFile="$OUT/$name.json"
  local rc=$?
  node -e '
    const fs = require("fs");
    const [name, file, rc] = process.argv.slice(1);
    let passed = 0, failed = 0;
    try { const r = JSON.parse(fs.readFileSync(file, "utf8")); passed = r.numPassedTests; failed = r.numFailedTests + (r.numFailedTestSuites || 0) - 0; if (r.numTotalTests === 0) failed += 1; } catch { failed = 1; }
    if (rc !== "0" && failed === 0) failed = 1;
    console.log(`${name}: ${passed} passed, ${failed} failed`);
  ' "$name" "$OUT/$name.json" "$rc"
  [ $rc -eq 0 ] || status=1
}

say "layer: typecheck"
if npm run --silent typecheck; then echo "typecheck: 1 passed, 0 failed"; else echo "typecheck: 0 passed, 1 failed"; status=1; fi

layer unit test/unit test/architecture
layer reference test/reference
layer cli test/cli

# The real-editor layer: Chromium, Node 24 and code-server installed into a cache folder outside the tree
# (test/tools/editor-install.sh), the .vsix packaged with vsce, the suite run in code-server; prints "editor: N passed, N failed".
say "layer: editor"
bash test/tools/editor-test.sh || status=1

say "summary"
if [ $status -eq 0 ]; then echo "all layers passed"; else echo "some layers FAILED"; fi
exit $status
