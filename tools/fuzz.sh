#!/usr/bin/env bash
# Builds the libFuzzer targets of tests/fuzz with clang (Debian packages
# clang and libclang-rt-14-dev) and runs each for SECONDS seconds (default
# 60, the CI setting), starting from the seed corpus tests/fuzz/corpus/<target>.
#
# usage: tools/fuzz.sh [SECONDS] [BUILD_DIR]      (default: 60 build/fuzz)
# longer manual run (an hour per target, both cores):
#   JOBS=2 tools/fuzz.sh 3600
# A crash leaves its input as BUILD_DIR/crash-<target>-*; reproduce it with
#   BUILD_DIR/<target> BUILD_DIR/crash-<target>-...
# and turn it into a regression test (FuzzRegression in tests/test_bad_input_api.cpp).
set -euo pipefail
cd "$(dirname "$0")/.."
seconds="${1:-60}"
build="${2:-build/fuzz}"
jobs="${JOBS:-1}"
cxx="${FUZZ_CXX:-clang++}"
mkdir -p "$build"
flags=(-std=c++20 -O1 -g1 -fno-omit-frame-pointer
       -fsanitize=fuzzer,address,undefined -fno-sanitize-recover=undefined
       -Iinclude -isystem /usr/include/eigen3)

build_target() {  # name, extra sources...
  local name="$1"; shift
  if [ ! -x "$build/$name" ] || [ -n "$(find include lib tests/fuzz -newer "$build/$name" -name '*pp' | head -1)" ]; then
    echo "fuzz.sh: building $name"
    "$cxx" "${flags[@]}" "tests/fuzz/$name.cpp" "$@" -o "$build/$name"
  fi
}
# The reader inflates gzip input through zlib when the program does
# (KNOTPATH_HAVE_ZLIB; zlib1g-dev is in tools/install-deps.sh), so the fuzzer
# reaches the inflating branch too (seed: corpus/fuzz_table_reader/gzip_table).
reader_zlib=()
if [ -f /usr/include/zlib.h ]; then reader_zlib=(-DKNOTPATH_HAVE_ZLIB -lz); fi
build_target fuzz_table_reader lib/table.cpp "${reader_zlib[@]}"
build_target fuzz_trace

export UBSAN_OPTIONS="halt_on_error=1:print_stacktrace=1"
export ASAN_OPTIONS="detect_leaks=1"
status=0
for target in fuzz_table_reader fuzz_trace; do
  work="$build/corpus-$target"
  mkdir -p "$work"
  echo "fuzz.sh: running $target for $seconds s"
  parallel=()
  if [ "$jobs" -gt 1 ]; then parallel=(-fork="$jobs"); fi
  if ! "$build/$target" "$work" "tests/fuzz/corpus/$target" \
      -max_total_time="$seconds" -timeout=10 -rss_limit_mb=2048 -max_len=4096 \
      "${parallel[@]}" -print_final_stats=1 \
      -artifact_prefix="$build/crash-$target-" >"$build/$target.log" 2>&1; then
    echo "fuzz.sh: $target FAILED; see $build/$target.log"
    tail -40 "$build/$target.log"
    status=1
  else
    grep -E "stat::number_of_executed_units|cov:" "$build/$target.log" | tail -2 || true
  fi
done
exit $status
