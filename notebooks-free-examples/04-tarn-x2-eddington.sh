#!/usr/bin/env bash
# Tarn X-2 (invented): an accreting neutron star, 1.6 Msun and 11.5 km, seen at 6.1 kpc with
# an X-ray flux of 3.2e-9 erg/s/cm2. Is it above its Eddington limit, and what accretion
# rate powers it? Accretion onto a surface: eta = G M / (R c^2).
set -euo pipefail
here="$(cd "$(dirname "$0")" && pwd)"
. "$here/common.sh"

# Solar-mix gas (X = 0.7) is closer to what a neutron star accretes from a normal companion.
"$holdfast" eddington --mass 1.6 Msun --hydrogen 0.7 \
    --flux 3.2e-9 erg/s/cm2 --distance 6.1 kpc --star-radius 11.5 km \
    --format json --output "$out/04-tarn-x2.json"
"$holdfast" eddington --mass 1.6 Msun --hydrogen 0.7 \
    --flux 3.2e-9 erg/s/cm2 --distance 6.1 kpc --star-radius 11.5 km
