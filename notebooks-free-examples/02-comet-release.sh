#!/usr/bin/env bash
# Veyra-C (invented): a comet on an e = 0.93 orbit that sheds carbon-rich dust at pericentre,
# 0.12 au from Veyra. Released at pericentre, grains are unbound already for
# beta >= (1 - e)/2 = 0.035, far smaller than the circular-orbit 1/2.
set -euo pipefail
here="$(cd "$(dirname "$0")" && pwd)"
holdfast="${HOLDFAST:-$here/../build/holdfast}"
out="${HOLDFAST_EXAMPLES_OUT:-$here/out}"
mkdir -p "$out"

star=(--luminosity 0.34 Lsun --mass 0.78 Msun --teff 4900 K)

"$holdfast" blowout "${star[@]}" --material carbon --eccentricity 0.93 --release pericentre \
    --distance 0.12 au --grain-radius 20 um --format json \
    --output "$out/02-comet-release.json"
"$holdfast" blowout "${star[@]}" --material carbon --eccentricity 0.93 --release pericentre \
    --distance 0.12 au --grain-radius 20 um
