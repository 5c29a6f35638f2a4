#!/usr/bin/env bash
# Tarn X-2 (invented): an accreting neutron star, 1.6 Msun and 11.5 km, seen at 6.1 kpc with
# an X-ray flux of 3.2e-9 erg/s/cm2 (taken as bolometric and isotropic). An accretion sanity
# check: its luminosity L = 4 pi d^2 F, its Eddington ratio L / L_Edd, the smallest accretor
# mass for which L is not above L_Edd, and the accretion rate that powers it (accretion onto
# a surface: eta = G M / (R c^2)).
set -euo pipefail
here="$(cd "$(dirname "$0")" && pwd)"
. "$here/common.sh"

# Solar-mix gas (X = 0.7) is closer to what a neutron star accretes from a normal companion.
tarn=(--mass 1.6 Msun --hydrogen 0.7 --flux 3.2e-9 erg/s/cm2 --distance 6.1 kpc
      --star-radius 11.5 km)
"$holdfast" eddington "${tarn[@]}" --format json --output "$out/02-tarn-x2.json"
"$holdfast" eddington "${tarn[@]}" --format csv --output "$out/02-tarn-x2.csv"
"$holdfast" eddington "${tarn[@]}"

f="$out/02-tarn-x2.csv"
echo
echo "Tarn X-2 in short (an invented source):"
printf '  luminosity 4 pi d^2 F     %.4g erg/s\n' "$(csv_get "$f" luminosity_erg_s)"
printf '  Eddington luminosity      %.4g erg/s for 1.6 Msun, X = 0.7\n' \
    "$(csv_get "$f" eddington_luminosity_erg_s)"
printf '  Eddington ratio           %.4g (sub-Eddington: %s)\n' \
    "$(csv_get "$f" eddington_ratio)" "$(csv_get "$f" sub_eddington)"
printf '  minimum accretor mass     %.4g Msun (for L not to exceed L_Edd)\n' \
    "$(csv_get "$f" minimum_mass_Msun)"
printf '  accretion rate needed     %.4g Msun/yr at eta = %.3g\n' \
    "$(csv_get "$f" required_accretion_rate_Msun_yr)" "$(csv_get "$f" efficiency)"
