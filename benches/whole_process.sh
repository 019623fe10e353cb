#!/usr/bin/env bash
# Whole-process benchmark: wall time and peak memory of `chordline run` on a synthetic
# recording-vehicle survey (10 m chord on a rigid beam, a reading every 0.25 m).
#
#   benches/whole_process.sh [LENGTH_KM] [SEED]     (default 100 km, seed 1)
#
# Prints one line per stage and a summary line; results are quoted in the README.
set -euo pipefail
cd "$(dirname "$0")/.."
KM=${1:-100}
SEED=${2:-1}
WORK=${TMPDIR:-/tmp}/chordline-bench-$KM-$SEED
mkdir -p "$WORK"
cargo build --release --quiet --bin chordline --example make_route
B=target/release/chordline
if [ ! -f "$WORK/survey.csv" ]; then
  target/release/examples/make_route "$KM" "$SEED" "$WORK/route.json"
  $B simulate "$WORK/route.json" --chord 10m --spacing 0.25m --marking wire --rail left \
     --noise 0.3mm --resolution 0.1mm --seed "$SEED" --out "$WORK/survey.csv" --force
fi
READINGS=$(grep -vc '^#' "$WORK/survey.csv")
echo "survey: $KM km, $READINGS lines, $(du -h "$WORK/survey.csv" | cut -f1)"
for i in 1 2 3; do
  /usr/bin/time -f "run $i: %e s wall, %U s user, %M KB peak RSS" \
    $B run "$WORK/survey.csv" --chord 10m --marking wire --rail left --out "$WORK/out" --force --quiet 2>&1 \
    | grep '^run '
done
