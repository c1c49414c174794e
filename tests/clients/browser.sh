#!/usr/bin/env bash
# Opens heft's review pages in a real browser, headless Chromium, and reads them back
# (check_review.mjs: the DevTools protocol over a pipe, with Node's standard library only):
#
#   bash tests/clients/browser.sh SPEC.json     # SPEC: see check_review.mjs
#
# Installs what is missing first: Debian's `chromium` (and Node.js), with apt-get when run as
# root; otherwise it says what to install and exits 1. Prints what the pages gave as JSON; exits
# non-zero when a page logged an error, asked the network for anything, or could not be read.
set -euo pipefail

if [ "$#" -ne 1 ]; then
    echo "usage: bash tests/clients/browser.sh SPEC.json   (see tests/clients/check_review.mjs)" >&2
    exit 2
fi
here="$(cd "$(dirname "${BASH_SOURCE[0]}")" && pwd)"

missing=()
command -v node >/dev/null 2>&1 || missing+=(nodejs)
command -v "${HEFT_CHROMIUM:-chromium}" >/dev/null 2>&1 || missing+=(chromium)
if [ "${#missing[@]}" -gt 0 ]; then
    if [ "$(id -u)" != 0 ]; then
        echo "browser check: ${missing[*]} missing and this user cannot install them (apt-get needs root):" \
            "install Debian's ${missing[*]}, or set HEFT_CHROMIUM to a Chromium binary" >&2
        exit 1
    fi
    # One installer at a time (tests may run in parallel).
    exec 9>"${TMPDIR:-/tmp}/heft-browser-install.lock"
    flock 9
    still=()
    for p in "${missing[@]}"; do
        case "$p" in
            nodejs) command -v node >/dev/null 2>&1 || still+=(nodejs) ;;
            *) command -v "$p" >/dev/null 2>&1 || still+=("$p") ;;
        esac
    done
    if [ "${#still[@]}" -gt 0 ]; then
        echo "browser check: installing Debian's ${still[*]}" >&2
        export DEBIAN_FRONTEND=noninteractive
        apt-get install -y -q "${still[@]}" >/dev/null 2>&1 || {
            apt-get update -q >/dev/null
            apt-get install -y -q "${still[@]}" >/dev/null
        }
    fi
    flock -u 9
    exec 9>&-
fi

exec node "$here/check_review.mjs" "$1"
