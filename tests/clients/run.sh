#!/usr/bin/env bash
# Checks heft's glTF bakes with real clients (the Khronos glTF validator and three.js):
#
#   bash tests/clients/run.sh DIR...     # DIR: the output folder of a `heft run`
#
# Installs what is missing first (install.sh: Node.js and npm from Debian, the npm packages
# pinned by package-lock.json). Exits non-zero on any failure, printing what failed.
set -euo pipefail

if [ "$#" -eq 0 ]; then
    echo "usage: bash tests/clients/run.sh DIR...   (output folders of \`heft run\`)" >&2
    exit 2
fi

source "$(dirname "${BASH_SOURCE[0]}")/install.sh"

exec node "$here/check_bake.mjs" "$@"
