#!/usr/bin/env bash
# Compiles each public header of include/knotpath on its own (a one-line
# generated translation unit, `#include <knotpath/NAME>`), and the
# instantiating sources of tests/strict, with
#   -Wall -Wextra -Wpedantic -Wconversion -Wsign-conversion -Werror
# by GCC and, when installed, Clang (front end only: -fsyntax-only). Third-party
# headers come in as system headers, so only knotpath's own lines are judged.
# Every header is compiled without the optional back ends (what
# find_package(knotpath) gives); with GMP/MPFR present, the headers that test
# KNOTPATH_HAVE_GMP/KNOTPATH_HAVE_MPFR are compiled with them too, tests/strict
# with them (and, when it uses precision.hpp, without them as well).
# Usage: tools/strict-headers.sh SOURCE_DIR GENERATED_INCLUDE_DIR HAVE_GMP HAVE_MPFR [SYSTEM_INCLUDE_DIR...]
set -euo pipefail
source=$1 generated=$2 have_gmp=$3 have_mpfr=$4
shift 4
flags=(-std=c++20 -fsyntax-only -Wall -Wextra -Wpedantic -Wconversion -Wsign-conversion -Werror
       -I"$source/include" -I"$generated")
for dir in "$@"; do flags+=(-isystem "$dir"); done
optional=()
case "$have_gmp" in ON|TRUE|1|YES|on|true) optional+=(-DKNOTPATH_HAVE_GMP) ;; esac
case "$have_mpfr" in ON|TRUE|1|YES|on|true) optional+=(-DKNOTPATH_HAVE_MPFR) ;; esac

compilers=("${CXX:-c++}")
if command -v clang++ > /dev/null; then compilers+=(clang++); fi

# Headers that need MPI (#include <mpi.h>) are compiled with its include
# folders as system folders when an MPI compiler wrapper is installed, and
# skipped with a message otherwise.
mpi_flags=""
if command -v mpicxx > /dev/null; then
  for flag in $(mpicxx --showme:incdirs 2>/dev/null); do mpi_flags+="-isystem $flag "; done
fi

jobs=$(mktemp)
trap 'rm -f "$jobs"' EXIT
cd "$source/include"
headers=$(find knotpath -name '*.hpp' | LC_ALL=C sort)
for compiler in "${compilers[@]}"; do
  for header in $headers; do
    if grep -q '#include <mpi.h>' "$header"; then
      if [ -n "$mpi_flags" ]; then
        echo "$compiler|header|$header|$mpi_flags" >> "$jobs"
      else
        echo "strict-headers: $header skipped (it needs MPI; no mpicxx is installed)"
      fi
      continue
    fi
    echo "$compiler|header|$header|" >> "$jobs"
    if [ ${#optional[@]} -gt 0 ] && grep -q 'KNOTPATH_HAVE_\(GMP\|MPFR\)' "$header"; then
      echo "$compiler|header|$header|${optional[*]}" >> "$jobs"
    fi
  done
  for unit in "$source"/tests/strict/*.cpp; do
    echo "$compiler|source|$unit|${optional[*]}" >> "$jobs"
    if [ ${#optional[@]} -gt 0 ] && grep -q 'precision.hpp' "$unit"; then  # also Boost's own rational
      echo "$compiler|source|$unit|" >> "$jobs"
    fi
  done
done

export STRICT_FLAGS="${flags[*]}"
check() {  # one line of the job list
  IFS='|' read -r compiler kind name defines <<< "$1"
  local log
  # shellcheck disable=SC2086
  if [ "$kind" = header ]; then
    log=$(echo "#include <$name>" | "$compiler" $STRICT_FLAGS $defines -x c++ - 2>&1) || {
      echo "FAIL $compiler $name $defines"; echo "$log"; return 1; }
  else
    log=$("$compiler" $STRICT_FLAGS $defines "$name" 2>&1) || {
      echo "FAIL $compiler $name $defines"; echo "$log"; return 1; }
  fi
  echo "ok   $compiler $name $defines"
}
export -f check
status=0
tr '\n' '\0' < "$jobs" | xargs -0 -P 2 -I{} bash -c 'check "$1"' _ {} || status=1
count=$(wc -l < "$jobs")
if [ $status -ne 0 ]; then
  echo "strict-headers: warnings or errors above"
  exit 1
fi
echo "strict-headers: $count compilations clean (${compilers[*]})"
