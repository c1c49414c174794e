#!/usr/bin/env bash
# Reads a Parquet file with a reader heft did not write (hyparquet, pinned by package-lock.json)
# and prints what it read as JSON (see read_parquet.mjs):
#
#   bash tests/clients/read_parquet.sh FILE
#
# Installs what is missing first (install.sh).
set -euo pipefail

if [ "$#" -ne 1 ]; then
    echo "usage: bash tests/clients/read_parquet.sh FILE.parquet" >&2
    exit 2
fi

source "$(dirname "${BASH_SOURCE[0]}")/install.sh"

exec node "$here/read_parquet.mjs" "$1"
