#!/usr/bin/env bash
# Whole-program benchmark (issue 9): builds headroom, writes the demo town
# at N pipe segments (default 1,000,000), runs it once under /usr/bin/time
# and prints the wall time and peak resident memory; where GDAL is
# installed it also times ogr2ogr copying the same pipe layer to GeoJSON
# and prints headroom's time as a ratio of that copy (the floor to beat).
#
#   bench/run.sh [N]           e.g. bench/run.sh 100000
#   BENCH_DIR=/tmp/b bench/run.sh   keep the town and outputs in /tmp/b
#   BENCH_DIR=/tmp/b BENCH_KEEP_TOWN=1 bench/run.sh   re-run on the town already there
#
# The run is the peak-hour evaluation with all outputs: the config is the
# town's own with the fire-flow sweep and the upsizing loop turned off
# (their cost grows with the hydrant count; they have their own benchmarks,
# BenchmarkFireFlow100k20k and the upsizing tests). BENCH_FULL=1 runs the
# town's config as written.
#
# Needs /usr/bin/time (Debian package time). Extra arguments after N go to
# `headroom run`. The run's stage lines (stderr) are printed before the
# totals.
set -euo pipefail
cd "$(dirname "$0")/.."
n=${1:-1000000}
shift || true
work=${BENCH_DIR:-$(mktemp -d)}
mkdir -p "$work"
if [ ! -x /usr/bin/time ]; then
	echo "bench: /usr/bin/time is missing (apt-get install time)" >&2
	exit 1
fi

CGO_ENABLED=0 go build -o "$work/headroom" ./cmd/headroom
rm -rf "$work/out"
if [ "${BENCH_KEEP_TOWN:-0}" = 1 ] && [ -f "$work/town/headroom.toml" ]; then
	echo "town: reusing $work/town (BENCH_KEEP_TOWN=1)"
else
	rm -rf "$work/town"
	"$work/headroom" demo --out "$work/town" --pipes "$n" >/dev/null
fi
pipes=$(ls "$work"/town/*-mains.geojson)
echo "town: $n segments requested; pipe layer $(du -h "$pipes" | cut -f1) ($pipes)"

config="$work/town/headroom.toml"
if [ "${BENCH_FULL:-0}" != 1 ]; then
	config="$work/town/bench.toml"
	sed -e '/^\[fire_flow\]/,/^enabled/ s/^enabled = true/enabled = false/' \
		-e '/^\[upsizing\]/,/^enabled/ s/^enabled = true/enabled = false/' \
		"$work/town/headroom.toml" >"$config"
	echo "config: $config (fire-flow sweep and upsizing loop off; BENCH_FULL=1 keeps them)"
fi

# %e wall seconds, %M peak resident set in KiB (GNU time).
/usr/bin/time -f "%e %M" -o "$work/time.txt" \
	"$work/headroom" run --config "$config" --out "$work/out" "$@" >"$work/summary.txt" 2>"$work/stages.txt"
sed 's/^headroom: /  /' "$work/stages.txt"
read -r wall peak_kib <"$work/time.txt"
awk -v w="$wall" -v k="$peak_kib" 'BEGIN { printf "headroom run: %s s wall, %.0f MiB peak resident\n", w, k / 1024 }'

if command -v ogr2ogr >/dev/null 2>&1; then
	rm -f "$work/copy.geojson"
	/usr/bin/time -f "%e" -o "$work/copy-time.txt" ogr2ogr -f GeoJSON "$work/copy.geojson" "$pipes"
	copy=$(cat "$work/copy-time.txt")
	awk -v w="$wall" -v c="$copy" 'BEGIN { printf "ogr2ogr GeoJSON copy of the pipe layer: %s s; ratio headroom / copy = %.2f\n", c, w / c }'
else
	echo "ogr2ogr not installed (gdal-bin): no ratio"
fi
echo "outputs and the run summary are in $work"
