#!/usr/bin/env bash
# Regenerates the demo chart PNGs shown in the README (docs/charts/*.png):
# builds the example, writes the demo charts and report as SVG/HTML into a
# temporary folder, and renders each SVG to PNG with rsvg-convert (Debian
# package librsvg2-bin). Run from anywhere inside a checkout:
#   bash docs/charts/regenerate.sh [BUILD_DIR]      (default: build/charts-docs)
set -euo pipefail
root="$(cd "$(dirname "${BASH_SOURCE[0]}")/../.." && pwd)"
build="${1:-$root/build/charts-docs}"
cmake -S "$root" -B "$build" -DCMAKE_BUILD_TYPE=Release -DKNOTPATH_BUILD_BENCHMARKS=OFF >/dev/null
cmake --build "$build" --target example_render_charts -j2 >/dev/null
out="$(mktemp -d)"
trap 'rm -rf "$out"' EXIT
"$build/examples/example_render_charts" "$out"
for chart in activity traces budget selection; do
  rsvg-convert --format png --output "$root/docs/charts/$chart.png" "$out/$chart.svg"
  echo "docs/charts/$chart.png"
done
