#!/usr/bin/env bash
# Veyra-C (invented): a comet on an e = 0.93 orbit that sheds carbon-rich dust at pericentre,
# 0.12 au from Veyra. Released at pericentre, grains are unbound already for
# beta >= (1 - e)/2 = 0.035, far smaller than the circular-orbit 1/2.
set -euo pipefail
here="$(cd "$(dirname "$0")" && pwd)"
. "$here/common.sh"

"$holdfast" blowout "${veyra[@]}" --material carbon --eccentricity 0.93 --release pericentre \
    --distance 0.12 au --grain-radius 20 um --format json \
    --output "$out/04-comet-release.json"
"$holdfast" blowout "${veyra[@]}" --material carbon --eccentricity 0.93 --release pericentre \
    --distance 0.12 au --grain-radius 20 um
