#!/bin/sh
# The 10,000-point Floquet chart of bench_sweep.cpp run by the app, whole processes: --threads 1
# and 2, and under mpirun with 1 and 2 ranks, interleaved, REPEATS times (default 3). Prints per
# run the sweep's own seconds (the summary's, from the model parsed to the table written), the
# process tree's wall time and CPU time (user + system of mpirun and its ranks, /usr/bin/time),
# and checks that every table is byte-identical to the first.
#   bench/sweep_ranks.sh BUILD_DIR [REPEATS]
set -eu
bin=${1:?usage: sweep_ranks.sh BUILD_DIR [REPEATS]}/bin
repeats=${2:-3}
here=$(cd "$(dirname "$0")/.." && pwd)
out=$(mktemp -d)
trap 'rm -rf "$out"' EXIT
export OMPI_ALLOW_RUN_AS_ROOT=1 OMPI_ALLOW_RUN_AS_ROOT_CONFIRM=1
args="--model $here/models/pumped_oscillator_chart.toml --job floquet --grid detuning=-0.4:0.4:100 --grid pump=0:0.8:100"
seconds() { /usr/bin/python3 -c 'import json,sys; print("%.3f" % json.load(open(sys.argv[1]))["seconds"])' "$1"; }
run() {  # NAME COMMAND...
  name=$1
  shift
  /usr/bin/time -f "%e %U %S" -o "$out/time" "$@" --csv "$out/$name.csv" --json "$out/$name.json" > /dev/null 2>&1
  set -- $(cat "$out/time")
  printf '%-10s sweep %6s s   wall %6s s   cpu %5.2f s\n' "$name" "$(seconds "$out/$name.json")" "$1" \
    "$(echo "$2 + $3" | bc)"
  if [ -f "$out/first.csv" ]; then cmp -s "$out/first.csv" "$out/$name.csv" || { echo "tables differ: $name"; exit 1; }
  else cp "$out/$name.csv" "$out/first.csv"; fi
}
uptime
i=1
while [ "$i" -le "$repeats" ]; do
  echo "repeat $i"
  run threads1 "$bin/ordex-sweep" $args --threads 1
  run threads2 "$bin/ordex-sweep" $args --threads 2
  run ranks1 mpirun -np 1 "$bin/ordex-sweep" $args --threads 1  # one rank alone runs threads: one
  run ranks2 mpirun --oversubscribe -np 2 "$bin/ordex-sweep" $args
  i=$((i + 1))
done
uptime
