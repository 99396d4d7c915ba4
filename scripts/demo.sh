#!/usr/bin/env bash
# The demo on a fresh machine: install what is missing, build the apps, and run the main jobs
# on the bundled models. Files it writes go to build/demo/.
set -euo pipefail
cd "$(dirname "$0")/.."
bash scripts/install-deps.sh
bash scripts/build.sh -DORDEX_TESTS=OFF
bin=build/bin
out=build/demo
mkdir -p "$out"
say() { printf '\n== %s ==\n$ %s\n' "$1" "$2"; eval "$2"; }
orbit=models/orbit_relative_motion.toml

say "Transition matrix of the chaser's relative motion over one revolution of the eccentric orbit" \
    "$bin/ordex-propagate --model $orbit"

say "Floquet analysis of the pumped oscillator (undamped: the pump makes it grow)" \
    "$bin/ordex-propagate --model models/pumped_oscillator.toml --floquet"

say "The same oscillator with damping zeta = 0.2" \
    "$bin/ordex-propagate --model models/pumped_oscillator.toml --floquet --set zeta=0.2"

say "Controllable over a 50-minute window with radial and along-track thrust only?" \
    "$bin/ordex-gramian --model $orbit --to 3000 --set kz=0"

say "... and with along-track thrust only?" \
    "$bin/ordex-gramian --model $orbit --to 3000 --set kx=0 --set kz=0"

say "Minimum-energy transfer from a hold point 2 km behind to 200 m behind on the approach axis" \
    "$bin/ordex-gramian --model $orbit --to 3000 --x0 0,-2,0,0,0,0 --xf 0,-0.2,0,0,0,0 --samples 301 --input-out $out/approach_u.csv"

say "The weakest eigenvalue along the orbit: 30-minute windows every 15 minutes" \
    "$bin/ordex-gramian --model $orbit --window-length 1800 --stride 900 --csv $out/profile.csv && cut -d, -f1-3 $out/profile.csv"

say "Replaying the designed input through the orbit model" \
    "$bin/ordex-respond --model $orbit --to 3000 --input $out/approach_u.csv --x0 0,-2,0,0,0,0"

say "Replaying a recorded acceleration log (invented) through the orbit model" \
    "$bin/ordex-respond --model $orbit --input models/orbit_recorded_input.csv --csv $out/recorded_response.csv"

say "Discrete-time model of the orbit scenario on a one-minute grid" \
    "$bin/ordex-discretize --model $orbit --step 60 --json $out/orbit_dt.json --csv $out/orbit_dt.csv"

say "A time-varying regulator for the final approach, flown from an offset" \
    "$bin/ordex-regulate --model $orbit --weights models/orbit_approach_weights.toml --x0 0.4,-2.5,0.3,0,0,0 --csv $out/gains.csv --response-csv $out/approach.csv"

say "The gain that stabilizes the pumped oscillator for all time (periodic steady state)" \
    "$bin/ordex-regulate --model models/pumped_oscillator.toml --periodic --csv $out/periodic_gains.csv"

say "Navigation error budget of the towed sled: covariance analysis on its sensor plan" \
    "$bin/ordex-estimate --model models/sled_depth.toml --noise models/sled_depth_noise.toml --measurements models/sled_depth_sensors.toml --sigma-csv $out/sled_sigma.csv"

say "The nonlinear chaser linearized along its nominal (exact Jacobians)" \
    "$bin/ordex-linearize --model models/chaser_two_body.toml --csv $out/chaser_lin.csv --toml $out/chaser_lin.toml"

say "A regulator designed on that linearization ..." \
    "$bin/ordex-regulate --model models/chaser_two_body.toml --weights models/orbit_approach_weights.toml --csv $out/chaser_gains.csv --no-check"

say "... flown on the nonlinear plant over 200 dispersed runs" \
    "$bin/ordex-simulate --model models/chaser_two_body.toml --gains $out/chaser_gains.csv --disperse models/chaser_dispersions.toml --runs 200 --seed 3 --json $out/chaser_runs.json"

say "Stability chart of the pumped rig over detuning and pump depth (one row per point)" \
    "$bin/ordex-sweep --model models/pumped_oscillator_chart.toml --job floquet --grid detuning=-0.4:0.4:21 --grid pump=0:0.8:9 --csv $out/chart.csv"

if [ -x "$bin/ordex-plot" ]; then
  say "Pictures: the Floquet multipliers, the sled's error budget, the stability chart" \
      "$bin/ordex-propagate --model models/pumped_oscillator.toml --floquet --json $out/floquet.json >/dev/null && $bin/ordex-plot $out/floquet.json -o $out/floquet.svg && $bin/ordex-plot $out/sled_sigma.csv -o $out/sled_sigma.svg && $bin/ordex-plot $out/chart.csv -o $out/chart.svg && ls $out/*.svg"
fi

printf '\nFiles written to %s/\n' "$out"
