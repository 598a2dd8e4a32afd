#!/usr/bin/env bash
# Measures the compile cost of two user files (tests/strict/trace_and_query.cpp
# and tests/strict/select_and_test.cpp), each as written (the light headers:
# core.hpp and what it asks for), with the umbrella knotpath.hpp forced in
# first (-include), and with the umbrella and the GMP/MPFR definitions (what
# every consumer compiled before the multiprecision component existed), at
# -O2, one compiler process at a time, three runs each.
# Prints the median wall and user CPU seconds.
# Usage: tools/compile-cost.sh SOURCE_DIR GENERATED_INCLUDE_DIR [CXX]
set -euo pipefail
source=$1 generated=$2 cxx=${3:-c++}
flags=(-std=c++20 -O2 -c -o /dev/null -I"$source/include" -I"$generated" -isystem /usr/include/eigen3)
median() { sort -n | sed -n 2p; }
for file in trace_and_query select_and_test; do
  for variant in light umbrella umbrella+gmp; do
    extra=()
    [ "$variant" = umbrella ] && extra=(-include knotpath/knotpath.hpp)
    [ "$variant" = umbrella+gmp ] && extra=(-include knotpath/knotpath.hpp -DKNOTPATH_HAVE_GMP -DKNOTPATH_HAVE_MPFR)
    walls=() users=()
    for run in 1 2 3; do
      read -r wall user < <( { /usr/bin/time -f "%e %U" "$cxx" "${flags[@]}" "${extra[@]}" \
                                 "$source/tests/strict/$file.cpp" 2>&1 >/dev/null; } | tail -1)
      walls+=("$wall") users+=("$user")
    done
    printf '%-16s %-12s wall %5.1f s  user %5.1f s\n' "$file" "$variant" \
      "$(printf '%s\n' "${walls[@]}" | median)" "$(printf '%s\n' "${users[@]}" | median)"
  done
done
