#!/usr/bin/env bash
# Installs a built tree into a temporary prefix, then configures, builds and
# runs a separate consumer project against it with find_package(knotpath
# CONFIG REQUIRED), and compiles the core once more through pkg-config.
# Usage: tools/install-and-consume.sh BUILD_DIR SOURCE_DIR
set -euo pipefail
build=$1
source=$2
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
cmake --install "$build" --prefix "$work/prefix" > "$work/install.log"
test -f "$work/prefix/include/knotpath/knotpath.hpp"
test -f "$work/prefix/include/knotpath/version.hpp"
test -x "$work/prefix/bin/knotpath"
"$work/prefix/bin/knotpath" --version
cmake -S "$source/tests/consumer" -B "$work/consumer" -DCMAKE_PREFIX_PATH="$work/prefix" \
  -DCMAKE_BUILD_TYPE=Release > "$work/configure.log"
cmake --build "$work/consumer" -j2 > "$work/build.log"
"$work/consumer/consumer"
if [ -x "$work/consumer/consumer_io" ]; then "$work/consumer/consumer_io"; fi
# pkg-config route (header-only core).
export PKG_CONFIG_PATH="$work/prefix/lib/pkgconfig:$work/prefix/lib/x86_64-linux-gnu/pkgconfig"
flags=$(pkg-config --cflags --libs knotpath)
c++ -O1 "$source/tests/consumer/main.cpp" -o "$work/consumer_pc" $flags
"$work/consumer_pc"
echo "install-and-consume: OK"
