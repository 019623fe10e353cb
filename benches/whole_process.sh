#!/usr/bin/env bash
# Whole-process benchmark: wall time and peak memory of `chordline run` against
# `chordline check` (reading and validating only) on one synthetic survey.
#
#   benches/whole_process.sh [LENGTH_KM] [SEED] [vehicle|hand]   (default 100 km, seed 1, vehicle)
#
# vehicle: a recording vehicle's 10 m chord on a rigid beam, a reading every 0.25 m
#          (`--chord 10m --marking wire`), 0.3 mm noise, 0.1 mm resolution;
# hand:    a 20 m chord hand survey read every 10 m (taped marks), 1 mm noise and resolution.
#
# Prints the survey, then for `check` and for `run --threads 1` and `--threads 2` (three runs
# each, all outputs written) wall time, user and system time and peak RSS, and summary lines with
# the medians: run / check, peak bytes per reading, and the speed-up of two threads, on wall time
# and on CPU time (user + sys: the figure to trust when other jobs share the machine; the
# two-thread speed-up needs wall time on an idle machine). Also checks that one and two threads
# give byte-identical output folders. Results are quoted in docs/SPEED.md and the README.
set -euo pipefail
cd "$(dirname "$0")/.."
KM=${1:-100}
SEED=${2:-1}
KIND=${3:-vehicle}
case "$KIND" in
  vehicle) SIM=(--chord 10m --spacing 0.25m --marking wire --noise 0.3mm --resolution 0.1mm)
           RUN=(--chord 10m --marking wire) ;;
  hand)    SIM=(--chord 20m --spacing 10m --marking taped --noise 1mm --resolution 1mm)
           RUN=(--chord 20m) ;;
  *) echo "kind must be vehicle or hand, not $KIND" >&2; exit 1 ;;
esac
WORK=${TMPDIR:-/tmp}/chordline-bench-$KIND-$KM-$SEED
mkdir -p "$WORK"
cargo build --release --quiet --bin chordline --example make_route
B=target/release/chordline
if [ ! -f "$WORK/survey.csv" ]; then
  target/release/examples/make_route "$KM" "$SEED" "$WORK/route.json"
  $B simulate "$WORK/route.json" "${SIM[@]}" --rail left --seed "$SEED" \
     --out "$WORK/survey.csv" --force
fi
READINGS=$(grep -v '^#' "$WORK/survey.csv" | tail -n +2 | wc -l)
echo "survey: $KIND, $KM km, $READINGS readings, $(du -h "$WORK/survey.csv" | cut -f1); load average $(cut -d' ' -f1-3 /proc/loadavg)"
# One timed command: prints "wall user peak_kb sys".
timed() {
  /usr/bin/time -f "%e %U %M %S" -o "$WORK/time.txt" "$@" > /dev/null 2> "$WORK/stderr.txt" \
    || { cat "$WORK/stderr.txt" >&2; exit 1; }
  cat "$WORK/time.txt"
}
median() { sort -g | sed -n 2p; }
declare -A WALL PEAK CPU
for what in check t1 t2; do
  : > "$WORK/$what.txt"
  for i in 1 2 3; do
    case $what in
      check) r=$(timed $B check "$WORK/survey.csv" "${RUN[@]}" --rail left) ;;
      t1) r=$(timed $B run "$WORK/survey.csv" "${RUN[@]}" --rail left --out "$WORK/out1" --force --quiet --threads 1) ;;
      t2) r=$(timed $B run "$WORK/survey.csv" "${RUN[@]}" --rail left --out "$WORK/out2" --force --quiet --threads 2) ;;
    esac
    echo "$what $i: $r (wall s, user s, peak KB, sys s)"
    echo "$r" >> "$WORK/$what.txt"
  done
  WALL[$what]=$(cut -d' ' -f1 "$WORK/$what.txt" | median)
  CPU[$what]=$(awk '{ print $2 + $4 }' "$WORK/$what.txt" | median)
  PEAK[$what]=$(cut -d' ' -f3 "$WORK/$what.txt" | sort -g | tail -1)
done
if diff -r "$WORK/out1" "$WORK/out2" > /dev/null; then SAME=yes; else SAME=NO; fi
awk -v c="${WALL[check]}" -v t1="${WALL[t1]}" -v t2="${WALL[t2]}" -v p1="${PEAK[t1]}" -v p2="${PEAK[t2]}" \
    -v n="$READINGS" -v same="$SAME" 'BEGIN {
  p = (p1 > p2 ? p1 : p2);
  printf "median: check %.2f s; run %.2f s (1 thread), %.2f s (2 threads); run/check %.1f; peak %.0f MB = %.0f B/reading; 2 threads %.2fx faster; outputs identical: %s\n",
         c, t1, t2, t2 / c, p / 1024, p * 1024 / n, t1 / t2, same }'
awk -v c="${CPU[check]}" -v t1="${CPU[t1]}" -v t2="${CPU[t2]}" 'BEGIN {
  printf "median CPU (user + sys): check %.2f s; run %.2f s (1 thread), %.2f s (2 threads); run/check %.1f\n",
         c, t1, t2, t2 / c }'
