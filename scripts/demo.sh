#!/usr/bin/env bash
# The demo on a fresh machine: install what is missing, build the apps, and run the main jobs
# on the bundled models.
set -euo pipefail
cd "$(dirname "$0")/.."
bash scripts/install-deps.sh
bash scripts/build.sh -DORDEX_TESTS=OFF
bin=build/bin
say() { printf '\n== %s ==\n' "$*"; }

say "Transition matrix of the chaser's relative motion over one revolution of the eccentric orbit"
$bin/ordex-propagate --model models/orbit_relative_motion.toml

say "Floquet analysis of the pumped oscillator (undamped: the pump makes it grow)"
$bin/ordex-propagate --model models/pumped_oscillator.toml --floquet

say "The same oscillator with damping zeta = 0.2"
$bin/ordex-propagate --model models/pumped_oscillator.toml --floquet --set zeta=0.2
