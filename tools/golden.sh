#!/usr/bin/env bash
# Byte-identity corpus: runs BUILD_DIR/tests/golden_dump (designs traced
# through the library, see tests/golden/golden_dump.cpp) and a fixed list of
# program commands (BUILD_DIR/lib/knotpath) into a temporary folder and
# compares every file, byte for byte, with tests/golden/expected. A change
# that is meant to alter an output is re-recorded with --record (and the
# changed expected files are reviewed and committed with that change; a new
# fuzz seed or a new command adds files, which are recorded the same way).
#
# usage: tools/golden.sh BUILD_DIR [--record]
# exit status: 0 identical (or recorded), 1 outputs differ (the first
# differences are shown), 2 usage or setup error.
#
# Reference data comes from $KNOTPATH_DATA_DIR or ../shared/data beside the
# project root; the commands on a data set that is absent are skipped with a
# message (and --record refuses to run, so the expected files stay whole).
#
# Every command runs in one fixed working directory: the data folder is
# linked there as "data" and outputs are written under "out", so the file
# names the outputs quote are the same relative names on every machine and
# no output holds an absolute path, a time or anything else that changes from
# run to run: nothing is normalised. One deliberate reduction: a file larger
# than LARGE bytes is kept as NAME.sha256 (its SHA-256 and size) instead of
# its text, to keep the expected folder small; any change still fails. To see
# how such a file differs, run golden_dump (or the command) with both builds
# into two folders and diff them.
#
# Left out on purpose: report folders (SVG charts and report.html, which
# embeds them) of --no-standardize runs: their axis label is due to change.
# The soak designs depend on the standard library's random distributions
# (tests/support/soak_design.hpp): the files were recorded with libstdc++
# (GCC build; a Clang -O1 build reproduces them too).
set -euo pipefail

usage() {
  echo "usage: tools/golden.sh BUILD_DIR [--record]" >&2
  exit 2
}
if [ $# -lt 1 ] || [ $# -gt 2 ]; then usage; fi
record=0
if [ $# -eq 2 ]; then
  [ "$2" = --record ] || usage
  record=1
fi
root="$(cd "$(dirname "$0")/.." && pwd)"
build="$(cd "$1" && pwd)" || usage
program="$build/lib/knotpath"
dump="$build/tests/golden_dump"
expected="$root/tests/golden/expected"
data="${KNOTPATH_DATA_DIR:-$root/../shared/data}"
readonly LARGE=65536
for exe in "$program" "$dump"; do
  if [ ! -x "$exe" ]; then
    echo "golden.sh: $exe is missing (build the targets knotpath_cli and golden_dump)" >&2
    exit 2
  fi
done

work="$(mktemp -d "${TMPDIR:-/tmp}/knotpath-golden.XXXXXX")"
trap 'rm -rf "$work"' EXIT
cd "$work"
mkdir -p out/dump out/cli
if [ -d "$data" ]; then ln -s "$(cd "$data" && pwd)" data; fi
skipped=()

# run FILE ARGS...: runs the program in the working directory and keeps the
# command, its standard output, standard error and exit status in FILE.
run() {
  local file="$1"
  shift
  local status=0
  "$program" "$@" >"$work/stdout" 2>"$work/stderr" || status=$?
  {
    echo "\$ knotpath $*"
    echo "--- stdout"
    cat "$work/stdout"
    echo "--- stderr"
    cat "$work/stderr"
    echo "--- exit status $status"
  } >"$file"
}

# data_set NAME TABLE RESPONSE PENALTY BUDGET RAW_PENALTY RAW_BUDGET:
# trace, at, select and verify on TABLE, standardized and with
# --no-standardize (each with a penalty and a budget inside its path).
data_set() {
  local name="$1" table="$2" response="$3"
  if [ ! -f "$table" ]; then
    echo "golden.sh: skipping $name: $table is absent (reference data, ../shared/data)"
    skipped+=("$name")
    return
  fi
  local mode penalty budget flags
  for mode in standardized no-standardize; do
    if [ "$mode" = standardized ]; then
      penalty="$4"
      budget="$5"
      flags=()
    else
      penalty="$6"
      budget="$7"
      flags=(--no-standardize)
    fi
    local dir="out/cli/$name/$mode"
    local model=("$table" --response "$response" "${flags[@]}")
    mkdir -p "$dir"
    run "$dir/trace.txt" trace "${model[@]}" --knots "$dir/knots.csv" --json "$dir/path.json"
    run "$dir/at-penalty.txt" at "${model[@]}" --penalty "$penalty"
    run "$dir/at-penalty-csv.txt" at "${model[@]}" --penalty "$penalty" --csv
    run "$dir/at-budget-csv.txt" at "${model[@]}" --budget "$budget" --csv
    run "$dir/at-relative-budget-csv.txt" at "${model[@]}" --relative-budget 0.5 --csv
    run "$dir/at-zero-csv.txt" at "${model[@]}" --penalty 0 --csv
    if [ "$mode" = standardized ]; then
      run "$dir/select.txt" select "${model[@]}" --json "$dir/select.json" --report "$dir/select-report"
    else  # no report folder: its charts are due to change (see above)
      run "$dir/select.txt" select "${model[@]}" --json "$dir/select.json"
    fi
    run "$dir/verify.txt" verify "${model[@]}" --json "$dir/verify.json"
  done
}

# Extra commands on the demo table and on tables written here (fixed
# content): least angle, and the messages of a few refused inputs.
extras() {
  local dir=out/cli/extras table=out/cli/demo/greenhouse.csv
  mkdir -p "$dir"
  run "$dir/trace-least-angle.txt" trace "$table" --response yield_kg_m2 --variant least-angle \
    --knots "$dir/least-angle-knots.csv"
  run "$dir/error-no-response.txt" trace "$table" --response no_such_column
  run "$dir/error-relative-budget.txt" at "$table" --response yield_kg_m2 --relative-budget 1.5
  run "$dir/error-exact-standardized.txt" trace "$table" --response yield_kg_m2 --precision exact
  printf 'y,a,b\n1,2,3\n2,NA,1\n3,1,oops\n' >"$dir/bad_cells.csv"
  run "$dir/error-bad-cells.txt" trace "$dir/bad_cells.csv" --response y
  run "$dir/drop-missing.txt" trace "$dir/bad_cells.csv" --response y --missing drop
  printf 'y,a,b\n1,5,1\n2,5,3\n4,5,2\n' >"$dir/constant_column.csv"
  run "$dir/constant-column.txt" trace "$dir/constant_column.csv" --response y
}

# More on the small collinear table: 50 digits, exact rationals, leave-one-out.
hald_more() {
  local dir=out/cli/hald_cement/more table=data/handbook/hald_cement.csv
  [ -f "$table" ] || return 0  # data_set reported the skip
  mkdir -p "$dir"
  run "$dir/precision-50.txt" trace "$table" --response heat --precision 50 \
    --knots "$dir/precision-50.csv"
  run "$dir/exact.txt" trace "$table" --response heat --no-standardize --precision exact \
    --knots "$dir/exact.csv" --json "$dir/exact.json"
  run "$dir/leave-one-out.txt" select "$table" --response heat --leave-one-out \
    --json "$dir/leave-one-out.json"
}

# Library corpus.
if ! "$dump" out/dump "$root/tests/fuzz/corpus/fuzz_trace" >"$work/dump.log" 2>&1; then
  echo "golden.sh: golden_dump failed:" >&2
  cat "$work/dump.log" >&2
  exit 2
fi

# Program corpus: the demo first (its table is an input below).
mkdir -p out/cli/demo
run out/cli/demo/demo.txt demo --out out/cli/demo
data_set greenhouse out/cli/demo/greenhouse.csv yield_kg_m2 1 20 10 0.5
data_set diabetes data/open/diabetes.csv progression 100 1500 60000 2.5
data_set longley data/strd/longley.csv y 150 20000 2000000 0.3
data_set hald_cement data/handbook/hald_cement.csv heat 20 30 550 0.6
extras
hald_more

# Large files are kept as their digest (see above).
while IFS= read -r -d '' file; do
  size="$(wc -c <"$file")"
  echo "sha256 $(sha256sum "$file" | cut -d' ' -f1) size $size" >"$file.sha256"
  rm "$file"
done < <(find out -type f -size +"$LARGE"c -print0)

if [ "$record" -eq 1 ]; then
  if [ ${#skipped[@]} -gt 0 ]; then
    echo "golden.sh: not recording: reference data absent (${skipped[*]})" >&2
    exit 2
  fi
  rm -rf "$expected"
  mkdir -p "$(dirname "$expected")"
  cp -r out "$expected"
  echo "golden.sh: recorded $(find "$expected" -type f | wc -l) files" \
    "($(du -sh "$expected" | cut -f1)) in tests/golden/expected"
  exit 0
fi

excludes=()
for name in "${skipped[@]}"; do excludes+=(--exclude="$name"); done
if ! diff -r "${excludes[@]}" "$expected" out >"$work/diff" 2>&1; then
  echo "golden.sh: outputs differ from tests/golden/expected (first differences):"
  head -n 60 "$work/diff"
  echo "golden.sh: $(grep -c '^diff -r\|^Only in' "$work/diff" || true) files differ." \
    "If the change is meant, re-record: tools/golden.sh BUILD_DIR --record"
  exit 1
fi
note=""
if [ ${#skipped[@]} -gt 0 ]; then note=" (skipped: ${skipped[*]})"; fi
echo "golden.sh: $(find out -type f | wc -l) files identical to tests/golden/expected$note"
