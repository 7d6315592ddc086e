#!/usr/bin/env bash
# Peak memory and time per frame of gaptrace track and gaptrace run against
# the length of the recording (issue 13: peak memory independent of the
# number of frames).
#
# The recordings are synth's step-quiescent experiment (a step strain, then
# a quiescent sample observed for the rest of the recording: the longer
# ones observe longer after the stop), as Motion JPEG at quality 3:
#   vga-N   640x480 px, 450 tracers
#   mp-N    1024x1024 px, 1000 tracers
# for N in FRAMES. Each is rendered once into BENCH_DIR and reused. For each
# recording and stage the table gives the maximum resident set size
# (/usr/bin/time -v), the wall time, the time per frame, and both against
# the shortest recording of the same size in the same run.
#
# Environment: BENCH_DIR (a folder kept between runs, so that the long
# renders are made once; default a temporary folder removed at the end), FRAMES (default "1500 6000 24000"),
# SIZES (default "vga mp"), STAGES (default "track run").
set -euo pipefail
cd "$(dirname "$0")/../.."

FRAMES=${FRAMES:-1500 6000 24000}
SIZES=${SIZES:-vga mp}
STAGES=${STAGES:-track run}
[ -x /usr/bin/time ] || { echo "bench-memory: /usr/bin/time (GNU time) is needed" >&2; exit 1; }

keep=1
if [ -z "${BENCH_DIR:-}" ]; then
  BENCH_DIR=$(mktemp -d)
  keep=0
fi
out=$(mktemp -d)
cleanup() {
  rm -rf "$out"
  [ "$keep" = 1 ] || rm -rf "$BENCH_DIR"
}
trap cleanup EXIT

go build -o bin/gaptrace ./cmd/gaptrace

# render NAME SIZE TRACERS FRAMES renders a recording unless it is there.
render() {
  local dir="$BENCH_DIR/$1"
  [ -f "$dir/done" ] && return 0
  rm -rf "$dir"
  mkdir -p "$dir"
  nice bin/gaptrace synth --scenario step-quiescent --size "$2" --tracers "$3" --frames "$4" --quality 3 -o "$dir" >/dev/null
  touch "$dir/done"
}

# measure STAGE DIR prints "maxrss_kb wall_s" of one run of the stage.
measure() {
  local log="$out/time.log"
  rm -rf "$out/o"
  /usr/bin/time -v bin/gaptrace "$1" -e "$2/experiment.yaml" -o "$out/o" "$2/video.avi" >/dev/null 2>"$log" || {
    echo "bench-memory: gaptrace $1 on $2 failed:" >&2
    grep '^gaptrace' "$log" >&2 || tail -3 "$log" >&2
    return 1
  }
  awk -F': ' '/Maximum resident set size/ { rss = $2 }
    /Elapsed \(wall clock\)/ { n = split($2, p, ":"); s = 0; for (i = 1; i <= n; i++) s = s * 60 + p[i] }
    END { printf "%d %.2f\n", rss, s }' "$log"
}

printf '%-10s %7s %-6s %10s %9s %9s %9s %9s\n' recording frames stage "rss_MiB" "wall_s" "ms/frame" "rss/1st" "ms/1st"
for size in $SIZES; do
  case $size in
    vga) geom=640x480 tracers=450 ;;
    mp) geom=1024x1024 tracers=1000 ;;
    *) echo "bench-memory: unknown size $size (vga or mp)" >&2; exit 1 ;;
  esac
  for stage in $STAGES; do
    first_rss="" first_ms=""
    for n in $FRAMES; do
      name=$size-$n
      render "$name" "$geom" "$tracers" "$n"
      read -r rss wall < <(measure "$stage" "$BENCH_DIR/$name")
      mib=$(awk -v k="$rss" 'BEGIN { printf "%.0f", k / 1024 }')
      ms=$(awk -v w="$wall" -v n="$n" 'BEGIN { printf "%.2f", 1000 * w / n }')
      [ -n "$first_rss" ] || { first_rss=$mib; first_ms=$ms; }
      printf '%-10s %7d %-6s %10s %9s %9s %9.2f %9.2f\n' "$name" "$n" "$stage" "$mib" "$wall" "$ms" \
        "$(awk -v a="$mib" -v b="$first_rss" 'BEGIN { print a / b }')" "$(awk -v a="$ms" -v b="$first_ms" 'BEGIN { print a / b }')"
    done
  done
done
