#!/usr/bin/env bash
# Installs a built tree into a temporary prefix, then configures, builds and
# runs a separate consumer project (tests/consumer) against it with
# find_package(knotpath CONFIG REQUIRED [COMPONENTS ...]), checks that the
# installed package files name no system library by absolute path, and
# compiles the core once more through pkg-config.
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

# The Python module, when built: `cmake --install` puts the package in the
# prefix's site folder (KNOTPATH_PYTHON_INSTALL_DIR), where the interpreter
# imports it (python/CMakeLists.txt); imported from there, not the build tree.
if grep -q '^KNOTPATH_BUILD_PYTHON:BOOL=ON' "$build/CMakeCache.txt"; then
  site=$(sed -n 's/^KNOTPATH_PYTHON_INSTALL_DIR:STRING=//p' "$build/CMakeCache.txt")
  python=$(sed -n 's/^_Python3_EXECUTABLE:INTERNAL=//p' "$build/CMakeCache.txt")
  (cd "$work" && PYTHONPATH="$work/prefix/$site" "$python" -c "
import numpy, knotpath
assert knotpath.__file__.startswith('$work/prefix/'), knotpath.__file__
path = knotpath.trace(numpy.eye(4)[:, :3], numpy.arange(4.0))
assert path.stop_reason == 'end', path")
fi

# The installed CMake and pkg-config files carry no absolute path (a library
# of the building machine such as /usr/lib/.../libgmp.so would break on
# another one): every path is relative to the installed prefix.
package_files=$(find "$work/prefix" \( -path '*/cmake/knotpath/*.cmake' -o -name 'knotpath*.pc' \))
test -n "$package_files"
if grep -nE '(^|[";=[:space:]])/[A-Za-z0-9_.+-]+/' $package_files; then
  echo "install-and-consume: absolute paths in the installed package files (above)" >&2
  exit 1
fi
if grep -nE '\.(so|a|dylib)([";[:space:]]|$)' $package_files | grep -v '${_IMPORT_PREFIX}/'; then
  echo "install-and-consume: a library outside the installed prefix named by file (above)" >&2
  exit 1
fi

# Was the tree built with GMP and MPFR? Then a consumer may ask for them.
parts=extras
if grep -q '^KNOTPATH_USE_GMP:BOOL=ON' "$build/CMakeCache.txt" &&
   grep -q '^KNOTPATH_USE_MPFR:BOOL=ON' "$build/CMakeCache.txt" &&
   grep -qE '^KNOTPATH_GMP_LIBRARY:FILEPATH=/' "$build/CMakeCache.txt" &&
   grep -qE '^KNOTPATH_MPFR_LIBRARY:FILEPATH=/' "$build/CMakeCache.txt"; then
  parts=all
fi

consume() {  # name, parts (core, extras, all), targets ("" for all), extra compiler flags, extra configure arguments...
  local name=$1 which=$2 targets=$3 flags=$4
  shift 4
  cmake -S "$source/tests/consumer" -B "$work/$name" -DCMAKE_PREFIX_PATH="$work/prefix" \
    --no-warn-unused-cli -DCMAKE_BUILD_TYPE= -DKNOTPATH_CONSUMER_PARTS="$which" -DCMAKE_CXX_FLAGS="$flags" "$@" \
    > "$work/$name-configure.log" || { cat "$work/$name-configure.log"; return 1; }
  # shellcheck disable=SC2086
  cmake --build "$work/$name" -j2 ${targets:+--target $targets} > "$work/$name-build.log" ||
    { cat "$work/$name-build.log"; return 1; }
  local program
  for program in consumer consumer_io consumer_table consumer_multiprecision; do
    if [ -x "$work/$name/$program" ]; then "$work/$name/$program"; fi
  done
}
# The header-only core alone, with fmt's and nlohmann_json's packages hidden:
# find_package(knotpath) without components needs neither (nor GMP/MPFR).
consume consumer-core core "" "" -DCMAKE_DISABLE_FIND_PACKAGE_fmt=ON -DCMAKE_DISABLE_FIND_PACKAGE_nlohmann_json=ON
# Every consumer is configured with no build type, CMake's default (no
# optimization flags): what crosses the package's boundary does not depend
# on the optimization level, and it compiles in a fraction of Release's time.
# The compiled extras (and, when built with them, the multiprecision back
# ends) as a user's default build; then the programs that cross the compiled
# extras' boundary (the reader and the report writer: consumer_table,
# consumer_io) twice more: with -march=native (wider vector units, so another
# Eigen alignment than the installed library's: the compiled reader must hand
# no Eigen object across), and with AddressSanitizer and
# UndefinedBehaviorSanitizer. The header-only core's program is not built
# again in those two: nothing of it crosses a compiled boundary, and the
# sanitizer suite (tools/sanitize.sh) runs the same code.
consume consumer "$parts" "" ""
consume consumer-native extras "consumer_table consumer_io" "-march=native"
export ASAN_OPTIONS=detect_leaks=1 UBSAN_OPTIONS=halt_on_error=1:print_stacktrace=1
consume consumer-sanitized extras "consumer_table consumer_io" "-fsanitize=address,undefined -fno-sanitize-recover=undefined -fno-omit-frame-pointer"
unset ASAN_OPTIONS UBSAN_OPTIONS

# pkg-config route: the core (no GMP/MPFR definitions), and the
# multiprecision file naming the libraries by link name.
export PKG_CONFIG_PATH="$work/prefix/lib/pkgconfig:$work/prefix/lib/x86_64-linux-gnu/pkgconfig"
flags=$(pkg-config --cflags --libs knotpath)
c++ -O1 -DKNOTPATH_CONSUMER_CORE_ONLY "$source/tests/consumer/main.cpp" -o "$work/consumer_pc" $flags
"$work/consumer_pc"
if [ "$parts" = all ]; then
  multiprecision=$(pkg-config --cflags --libs knotpath-multiprecision)
  for expected in -DKNOTPATH_HAVE_GMP -DKNOTPATH_HAVE_MPFR -lgmp -lmpfr; do
    case " $multiprecision " in *" $expected "*) ;; *) echo "knotpath-multiprecision.pc lacks $expected: $multiprecision" >&2; exit 1 ;; esac
  done
fi
echo "install-and-consume: OK (consumer parts: core, $parts)"
