#!/bin/bash
# map_speed.sh -- speed and memory of `zeeline map` as a user runs it (prints figures; asserts nothing).
#
# Usage: bash tests/bench/map_speed.sh [BUILD_DIR=build] [WORK_DIR=/tmp/zeeline_map_speed]
# Environment: ZL_BENCH_REPEATS (default 3; the best wall time is kept, the machine may be shared),
#              ZL_BENCH_BIG=1 also grows the WFA cube to ~4.3 GiB (y repeated 9 times) for the RSS check,
#              ZL_BENCH_PARTS="wfa me" (default both).
#
# WFA: a 478.6 MiB float32 cube (demo scene, 792 x 660 pixels, 60 wavelengths, IQUV) made by
# `zeeline simulate --demo`, plus copies with other axis orders (bench_cube_tool reshape). For each:
#   floor   the best time to read every sample as float with cfitsio alone (bench_cube_tool floor),
#   bare    (xyls only) the bare arithmetic of the weak-field fits with no checks (bench_cube_tool bare), on one core,
#           and with the passes of map's checks added (bare --checks): what a pixels-in-lanes design would cost
#   wfa     the best wall time of `zeeline map --method wfa --threads 2` (and --threads 1), its ratio to the
#           floor, and its peak RSS (/usr/bin/time %M).
# ME: a 12 000-pixel cube of mixed strong (1-3 kG), moderate (0.3-1 kG) and weak (10-300 G) fields
# (mixed_field_params.py + `zeeline simulate --params`), mapped with `--method me --threads 1` and 2:
# pixels/s/core, LM iterations per pixel, the 2-thread speed-up, and the accuracy against the truth maps
# (median |B - B_true| and the width of the pulls (B - B_true) / sigma over unflagged pixels).
set -euo pipefail
SRC=$(cd "$(dirname "$0")/../.." && pwd)
BUILD=${1:-$SRC/build}
WORK=${2:-/tmp/zeeline_map_speed}
Z=$BUILD/zeeline
TOOL=$BUILD/tests/bench/bench_cube_tool
REPEATS=${ZL_BENCH_REPEATS:-3}
PARTS=${ZL_BENCH_PARTS:-wfa me}
CAT=$SRC/demo_maps/lines.csv
PY=/usr/bin/python3
mkdir -p "$WORK"
[ -x "$Z" ] && [ -x "$TOOL" ] || { echo "map_speed: build zeeline and bench_cube_tool in $BUILD first" >&2; exit 2; }

# best_run OUTVAR_TIME OUTVAR_RSS -- cmd...: best wall time (s) and its peak RSS (MiB) over REPEATS runs.
best_run() {
  local __t=$1 __r=$2
  shift 3
  local best=1e9 rss=0 _tt _mm
  for _ in $(seq "$REPEATS"); do
    /usr/bin/time -f "%e %M" -o "$WORK/time.txt" "$@" > "$WORK/last_stdout.txt"
    read -r _tt _mm < "$WORK/time.txt"
    if awk -v a="$_tt" -v b="$best" 'BEGIN{exit !(a < b)}'; then best=$_tt; rss=$((_mm / 1024)); fi
  done
  printf -v "$__t" '%s' "$best"
  printf -v "$__r" '%s' "$rss"
}

if [[ " $PARTS " == *" wfa "* ]]; then
  CUBE=$WORK/wfa_xyls.fits
  if [ ! -f "$CUBE" ]; then
    "$Z" simulate --demo --line FeI_6302 --catalog "$CAT" --nx 792 --ny 660 --points 60 --seed 4 -q -o "$CUBE"
  fi
  for order in lsxy ylxs; do
    [ -f "$WORK/wfa_$order.fits" ] || "$TOOL" reshape "$CUBE" "$WORK/wfa_$order.fits" "$order" > /dev/null
  done
  echo "== WFA map vs the cfitsio read floor (best of $REPEATS; $(nproc) cores; load $(cut -d' ' -f1 /proc/loadavg))"
  printf '%-6s %9s %9s %7s %9s %7s %8s\n' order floor_s wfa2_s ratio wfa1_s ratio1 rss_MiB
  for order in xyls lsxy ylxs; do
    f=$WORK/wfa_$order.fits
    floor=$("$TOOL" floor "$f" "$REPEATS" | awk '{print $2}')
    best_run t2 r2 -- "$Z" map "$f" --line FeI_6302 --catalog "$CAT" --method wfa --threads 2 -o "$WORK/maps.fits" --overwrite
    summary=$(grep -E '^speed:' "$WORK/last_stdout.txt" || true)
    best_run t1 r1 -- "$Z" map "$f" --line FeI_6302 --catalog "$CAT" --method wfa --threads 1 -o "$WORK/maps.fits" --overwrite
    printf '%-6s %9.3f %9.3f %7.2f %9.3f %7.2f %8d\n' "$order" "$floor" "$t2" "$(echo "$t2 / $floor" | bc -l)" \
      "$t1" "$(echo "$t1 / $floor" | bc -l)" "$r2"
    [ -n "$summary" ] && echo "       $summary"
  done
  # What any weak-field map must at least compute (bench_cube_tool bare: the five sums and the per-pixel
  # B_LOS, B_T, azimuth with the pixels in vector lanes, no checks or error bars), on one core.
  # With --checks, the passes of map's checks added in the same layout (what a pixels-in-lanes rewrite would cost).
  bare=$("$TOOL" bare "$CUBE" "$REPEATS" | awk '{print $2}')
  lanes=$("$TOOL" bare "$CUBE" "$REPEATS" --checks | awk '{print $2}')
  echo "pixels in vector lanes, xyls, one core: bare weak-field sums $bare s; with the checks' passes $lanes s"
  if [ "${ZL_BENCH_BIG:-0}" = 1 ]; then
    BIG=$WORK/wfa_big.fits
    [ -f "$BIG" ] || "$TOOL" reshape "$CUBE" "$BIG" xyls 9 > /dev/null
    floor=$("$TOOL" floor "$BIG" 1 | awk '{print $2}')
    REPEATS=1 best_run tb rb -- "$Z" map "$BIG" --line FeI_6302 --catalog "$CAT" --method wfa --threads 2 -o "$WORK/maps_big.fits" --overwrite
    echo "big cube $(du -mL "$BIG" | cut -f1) MiB (792 x 5940 px): floor $floor s, wfa $tb s (ratio $(echo "$tb / $floor" | bc -l | cut -c1-4)), peak RSS $rb MiB"
    grep -E '^speed:' "$WORK/last_stdout.txt" || true
    rm -f "$WORK/maps_big.fits"
  fi
fi

if [[ " $PARTS " == *" me "* ]]; then
  ME=$WORK/me_mixed.fits
  if [ ! -f "$ME" ]; then
    $PY "$SRC/tests/bench/mixed_field_params.py" "$WORK/me_params.fits" 120 100 > /dev/null
    "$Z" simulate --params "$WORK/me_params.fits" --line FeI_6302 --catalog "$CAT" --points 60 --seed 5 -q -o "$ME"
  fi
  echo "== ME map of 12000 mixed-field pixels (best of $REPEATS)"
  for th in 1 2; do
    best_run t r -- "$Z" map "$ME" --line FeI_6302 --catalog "$CAT" --method me --threads $th -o "$WORK/me_maps_$th.fits" --overwrite
    it=$(sed -n 's/^me: \([0-9.]*\) iterations.*/\1/p' "$WORK/last_stdout.txt")
    pxs=$(echo "12000 / $t" | bc -l)
    printf 'threads %d: %.3f s, %.0f px/s (%.0f px/s/core), %s LM iterations per pixel, peak RSS %d MiB\n' \
      "$th" "$t" "$pxs" "$(echo "$pxs / $th" | bc -l)" "$it" "$r"
    grep -E '^speed:' "$WORK/last_stdout.txt" || true
    eval "t_me_$th=$t"
  done
  printf 'speed-up 2 vs 1 thread: %.2f x\n' "$(echo "$t_me_1 / $t_me_2" | bc -l)"
  $PY - "$ME" "$WORK/me_maps_1.fits" <<'EOF'
import sys
import numpy as np
from astropy.io import fits
cube, maps = sys.argv[1], sys.argv[2]
with fits.open(cube) as c, fits.open(maps) as m:
    q = m["QUALITY"].data
    ok = q == 0
    print(f"accuracy: {ok.sum()} of {q.size} pixels unflagged")
    for name in ["B_TOTAL", "B_LOS", "B_TRANS", "V_LOS"]:
        t = c["TRUE_" + name].data.astype(float)
        v = m[name].data.astype(float)
        e = m[name + "_SIGMA"].data.astype(float)
        sel = ok & np.isfinite(v) & np.isfinite(e) & (e > 0)
        pull = (v[sel] - t[sel]) / e[sel]
        mad = 1.4826 * np.median(np.abs(pull - np.median(pull)))
        print(f"  {name:8s} median |err| {np.median(np.abs(v[sel] - t[sel])):.3g}, pull std {pull.std():.3f}, "
              f"pull robust width {mad:.3f}, |pull| > 5: {(np.abs(pull) > 5).sum()}")
EOF
fi
