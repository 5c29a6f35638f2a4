#!/usr/bin/env bash
# How warm is dark, carbon-rich dust in and around Veyra's Hollow Ring (38 au), and inside
# which distance would water ice mixed into such grains sublimate (taken here at 110 K, a
# common choice for vacuum sublimation over astronomical times)? The shipped carbon-like
# material has a constant index, so the thermal-infrared emission is only indicative.
set -euo pipefail
here="$(cd "$(dirname "$0")" && pwd)"
. "$here/common.sh"

"$holdfast" temperature "${veyra[@]}" --material carbon --grain-radius 10 um \
    --distances 1au..100au --points 12 --sublimation-temperature 110 K \
    --format csv --output "$out/05-ring-temperature.csv"
"$holdfast" temperature "${veyra[@]}" --material carbon --grain-radius 10 um \
    --distances 1au..100au --points 12 --sublimation-temperature 110 K
