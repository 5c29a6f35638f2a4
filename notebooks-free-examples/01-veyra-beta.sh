#!/usr/bin/env bash
# Veyra (invented K dwarf: 4900 K, 0.34 Lsun, 0.78 Msun) and its Hollow Ring, a cold belt of
# parent bodies on near-circular orbits at about 38 au. Do the ring's dust grains stay bound?
# beta(s) from Mie theory averaged over a 4900 K Planck spectrum, for three shipped
# materials (silicate, carbon, ice; see 'holdfast materials list'); a grain released from a
# circular orbit escapes when beta >= 1/2.
set -euo pipefail
here="$(cd "$(dirname "$0")" && pwd)"
. "$here/common.sh"

materials=(silicate carbon ice)
for m in "${materials[@]}"; do
    # The beta curve as CSV, with its own plot (the blow-out radii marked, if any). 60 radii
    # over four decades keep the nearly transparent ice curve to about half a second.
    "$holdfast" beta "${veyra[@]}" --material "$m" --radii 0.01um..100um --points 60 \
        --format csv --output "$out/01-veyra-beta-$m.csv" --plot "$out/01-veyra-beta-$m.svg"
    # Blow-out radii for a circular parent (beta_crit = 1/2), searched over 0.01 um..1 mm.
    "$holdfast" blowout "${veyra[@]}" --material "$m" --format csv \
        --output "$out/01-veyra-blowout-$m.csv"
done

# The three curves on one plot, with the critical beta of a circular parent.
gnuplot <<EOF
set terminal svg size 800,560 dynamic noenhanced font "sans,12"
set output "$out/01-veyra-beta.svg"
set datafile separator ","
set logscale xy
set xlabel "grain radius s (um)"
set ylabel "beta = F_rad / F_grav"
set title "Veyra (invented; 0.34 Lsun, 0.78 Msun, 4900 K): Mie beta curves"
set key bottom left
set grid
plot "$out/01-veyra-beta-silicate.csv" using 1:3 skip 1 with lines lw 2 title "silicate", \
     "$out/01-veyra-beta-carbon.csv" using 1:3 skip 1 with lines lw 2 title "carbon", \
     "$out/01-veyra-beta-ice.csv" using 1:3 skip 1 with lines lw 2 title "ice", \
     0.5 with lines dt 2 lc rgb "black" title "beta_crit = 1/2 (circular parent)"
EOF

echo "Do grains stay bound around Veyra? (released from the Hollow Ring's circular orbits, beta_crit = 1/2)"
for m in "${materials[@]}"; do
    f="$out/01-veyra-blowout-$m.csv"
    beta_max="$(csv_get "$f" beta_max)"
    at="$(csv_get "$f" radius_at_beta_max_um)"
    radii="$(csv_get "$f" blowout_radii_um)"
    if [ -z "$radii" ] || [ "$radii" = none ]; then
        answer="yes, every grain stays bound"
    else
        answer="no: $(csv_get "$f" verdict)"
    fi
    printf '  %-8s  beta_max = %.3g at %.3g um; %s\n' "$m" "$beta_max" "$at" "$answer"
done
echo "Outputs: $out/01-veyra-beta-*.csv, 01-veyra-blowout-*.csv, plots 01-veyra-beta*.svg"
