#!/usr/bin/env bash
# Checks heft's glTF bakes with real clients (the Khronos glTF validator and three.js):
#
#   bash tests/clients/run.sh DIR...     # DIR: the output folder of a `heft run`
#
# Installs what is missing first: Node.js and npm from Debian if absent, then the npm packages
# pinned by package-lock.json (npm ci) if node_modules is missing or older than the lockfile.
# Exits non-zero on any failure, printing what failed.
set -euo pipefail

here="$(cd "$(dirname "${BASH_SOURCE[0]}")" && pwd)"

if [ "$#" -eq 0 ]; then
    echo "usage: bash tests/clients/run.sh DIR...   (output folders of \`heft run\`)" >&2
    exit 2
fi

if ! command -v node >/dev/null 2>&1 || ! command -v npm >/dev/null 2>&1; then
    echo "run.sh: node or npm is missing; installing Debian's nodejs and npm" >&2
    apt-get update
    apt-get install -y nodejs npm
fi

# One installer at a time (tests may call this script in parallel): a lock on the lockfile.
exec 9<"$here/package-lock.json"
flock 9
# npm ci writes node_modules/.package-lock.json last; it is the stamp of a finished install.
stamp="$here/node_modules/.package-lock.json"
if [ ! -f "$stamp" ] || [ "$here/package-lock.json" -nt "$stamp" ]; then
    echo "run.sh: installing the pinned npm packages (npm ci)" >&2
    (cd "$here" && npm ci --no-audit --no-fund) >&2 || {
        echo "run.sh: npm ci failed in $here" >&2
        exit 1
    }
fi
flock -u 9
exec 9>&-

exec node "$here/check_bake.mjs" "$@"
