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
# The consumer is built three times: as a user's default build, with
# -march=native (wider vector units, so another Eigen alignment than the
# installed library's: the compiled reader must hand no Eigen object across),
# and with AddressSanitizer and UndefinedBehaviorSanitizer.
consume() {  # name, extra compiler flags
  cmake -S "$source/tests/consumer" -B "$work/$1" -DCMAKE_PREFIX_PATH="$work/prefix" \
    -DCMAKE_BUILD_TYPE=Release -DCMAKE_CXX_FLAGS="$2" > "$work/$1-configure.log"
  cmake --build "$work/$1" -j2 > "$work/$1-build.log"
  "$work/$1/consumer"
  if [ -x "$work/$1/consumer_io" ]; then "$work/$1/consumer_io"; "$work/$1/consumer_table"; fi
}
consume consumer ""
consume consumer-native "-march=native"
export ASAN_OPTIONS=detect_leaks=1 UBSAN_OPTIONS=halt_on_error=1:print_stacktrace=1
consume consumer-sanitized "-fsanitize=address,undefined -fno-sanitize-recover=undefined -fno-omit-frame-pointer"
unset ASAN_OPTIONS UBSAN_OPTIONS
# pkg-config route (header-only core).
export PKG_CONFIG_PATH="$work/prefix/lib/pkgconfig:$work/prefix/lib/x86_64-linux-gnu/pkgconfig"
flags=$(pkg-config --cflags --libs knotpath)
c++ -O1 "$source/tests/consumer/main.cpp" -o "$work/consumer_pc" $flags
"$work/consumer_pc"
echo "install-and-consume: OK"
