#!/usr/bin/env bash
# The demo of the README: a motor-laden bilayer patch over a deep buffer
# (examples/demo.yaml), run once with its active inclusions and once with
# them switched off, so that the mixing they cause can be compared
# (the two "mixing:" lines).
# Usage: scripts/demo.sh MEMIX CONFIG OUTDIR
set -euo pipefail
memix=${1:?memix binary} cfg=${2:?config} out=${3:?output directory}
mkdir -p "$out"

echo "== memix check $cfg"
"$memix" check "$cfg" | sed -n '1,12p'
echo
echo "== memix run $cfg (active inclusions)"
"$memix" run "$cfg" -o "$out/active" --force
echo
echo "== the same membrane without inclusions (diffusion alone), for comparison"
"$memix" run "$cfg" -o "$out/passive" --force --set inclusions.model=none 2>/dev/null | grep -E "^(mixing|status)"
echo
echo "Figures: $out/active/figures/ (composition, orientation, velocity, vorticity, mixing, order, speed)"
echo "         $out/passive/figures/"
echo "Data:    $out/active/{series.csv,summary.json,snapshots.h5,snapshots.xdmf}"
