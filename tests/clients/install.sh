#!/usr/bin/env bash
# Sourced by the clients' scripts (run.sh, read_parquet.sh): installs what is missing: Node.js
# and npm from Debian if absent, then the npm packages pinned by package-lock.json (npm ci) if
# node_modules is missing or older than the lockfile. Sets `here` to this folder.

here="$(cd "$(dirname "${BASH_SOURCE[0]}")" && pwd)"

if ! command -v node >/dev/null 2>&1 || ! command -v npm >/dev/null 2>&1; then
    echo "install.sh: node or npm is missing; installing Debian's nodejs and npm" >&2
    apt-get update
    apt-get install -y nodejs npm
fi

# One installer at a time (tests may call the clients in parallel): a lock on the lockfile.
exec 9<"$here/package-lock.json"
flock 9
# npm ci writes node_modules/.package-lock.json last; it is the stamp of a finished install.
stamp="$here/node_modules/.package-lock.json"
if [ ! -f "$stamp" ] || [ "$here/package-lock.json" -nt "$stamp" ]; then
    echo "install.sh: installing the pinned npm packages (npm ci)" >&2
    (cd "$here" && npm ci --no-audit --no-fund) >&2 || {
        echo "install.sh: npm ci failed in $here" >&2
        exit 1
    }
fi
flock -u 9
exec 9>&-
