#!/usr/bin/env bash
# Veyra (invented K dwarf: 4900 K, 0.34 Lsun, 0.78 Msun) and its Hollow Ring, a cold belt of
# parent bodies on near-circular orbits at about 38 au. Which silicate grains does Veyra's
# light blow out? beta(s) from Mie theory averaged over a 4900 K Planck spectrum.
set -euo pipefail
here="$(cd "$(dirname "$0")" && pwd)"
. "$here/common.sh"

# The beta curve, as CSV for plotting elsewhere.
"$holdfast" beta "${veyra[@]}" --material silicate --radii 0.01um..100um --points 60 \
    --format csv --output "$out/01-veyra-beta.csv"

# Blow-out radii for a circular parent (beta_crit = 1/2), compact and 50% porous grains.
"$holdfast" blowout "${veyra[@]}" --material silicate --format json \
    --output "$out/01-veyra-blowout-compact.json"
"$holdfast" blowout "${veyra[@]}" --material silicate --porosity 0.5 --format json \
    --output "$out/01-veyra-blowout-porous.json"
"$holdfast" blowout "${veyra[@]}" --material silicate --porosity 0.5
