#!/bin/sh
# Installs heft and its node plugins where a shell finds them:
#   ./install.sh            # into ~/.local: ~/.local/lib/heft/ and the command ~/.local/bin/heft
#   ./install.sh /opt/heft  # into /opt/heft/lib/heft/ and /opt/heft/bin/heft
# heft loads the plugins in the folder of its own executable, so they are installed together
# in PREFIX/lib/heft, and PREFIX/bin/heft is a link to that executable (heft follows the link
# to find its folder). HEFT_BUILD_DIR names an existing build to install instead of building
# one (the tests use it).
set -eu
cd "$(dirname "$0")"
prefix="${1:-$HOME/.local}"
build="${HEFT_BUILD_DIR:-}"
if [ -z "$build" ]; then
    cargo build --release
    build=target/release
fi
mkdir -p "$prefix/lib/heft" "$prefix/bin"
cp "$build/heft" "$prefix/lib/heft/"
count=0
for lib in "$build"/libheft_*.so "$build"/libheft_*.dylib; do
    [ -e "$lib" ] || continue
    cp "$lib" "$prefix/lib/heft/"
    count=$((count + 1))
done
ln -sf "$prefix/lib/heft/heft" "$prefix/bin/heft"
echo "installed heft and $count plugins in $prefix/lib/heft; the command is $prefix/bin/heft"
case ":$PATH:" in
    *":$prefix/bin:"*) ;;
    *) echo "add $prefix/bin to PATH to run it as \`heft\`" ;;
esac
