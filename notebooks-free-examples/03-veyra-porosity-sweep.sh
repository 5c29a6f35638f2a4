#!/usr/bin/env bash
# How do porosity and Veyra's luminosity change what stays bound in the Hollow Ring (38 au)?
# A sweep over silicate porosity 0..0.8 and luminosity 0.25, 0.34, 0.45 Lsun at the same
# 4900 K spectrum (veyra-porosity-sweep.toml), one CSV row per luminosity x porosity x grain
# radius (0.1..100 um), then a summary per luminosity and porosity and a plot of it.
set -euo pipefail
here="$(cd "$(dirname "$0")" && pwd)"
. "$here/common.sh"

sweep="$out/03-veyra-sweep.csv"   # its sidecar (provenance, timings) is $sweep.json
"$holdfast" sweep "$here/veyra-porosity-sweep.toml" -o "$sweep" --progress off

# One row per luminosity and porosity: beta of 1 um grains (a grid radius) and the largest
# beta on the radius grid. The numbers are copied as holdfast wrote them.
summary="$out/03-veyra-sweep-summary.csv"
awk -F, '
NR == 1 { for (i = 1; i <= NF; i++) c[$i] = i; next }
{
    key = $c["luminosity_Lsun"] "," $c["porosity"]
    if (!(key in seen)) { seen[key] = 1; order[++n] = key; density[key] = $c["grain_density_g_cm3"];
                          blowout[key] = $c["blowout_radii_um"]; bmax[key] = $c["beta"] }
    if ($c["beta"] + 0 > bmax[key] + 0) bmax[key] = $c["beta"]
    if ($c["grain_radius_um"] + 0 == 1) b1[key] = $c["beta"]
}
END {
    print "luminosity_Lsun,porosity,grain_density_g_cm3,beta_at_1um,beta_max_on_grid,blowout_radii_um"
    for (i = 1; i <= n; i++) {
        k = order[i]
        if (!(k in b1)) { print "no 1 um row for " k > "/dev/stderr"; exit 1 }
        print k "," density[k] "," b1[k] "," bmax[k] "," blowout[k]
    }
}' "$sweep" > "$summary.tmp"
mv "$summary.tmp" "$summary"

# beta against porosity, one line per luminosity.
gnuplot <<EOF2
set terminal svg size 1000,480 dynamic noenhanced font "sans,12"
set output "$out/03-veyra-sweep.svg"
set datafile separator ","
set multiplot layout 1,2 title "Veyra (invented), porous silicate grains at 38 au"
set xlabel "porosity (vacuum volume fraction)"
set grid
set key top right
set xrange [0:0.8]
set ylabel "beta of 1 um grains"
plot for [L in "0.25 0.34 0.45"] "$summary" using (\$1 == L ? \$2 : NaN):4 skip 1 \
     smooth unique with linespoints lw 2 title sprintf("L = %s Lsun", L)
set ylabel "largest beta, 0.1..100 um"
set yrange [0:0.55]
plot for [L in "0.25 0.34 0.45"] "$summary" using (\$1 == L ? \$2 : NaN):5 skip 1 \
     smooth unique with linespoints lw 2 title sprintf("L = %s Lsun", L), \
     0.5 with lines dt 2 lc rgb "black" title "beta_crit = 1/2"
unset multiplot
EOF2

echo
echo "Veyra's Hollow Ring, porous silicate (beta_crit = 1/2 for the ring's circular orbits):"
awk -F, 'NR > 1 { printf "  L = %-4s Lsun  porosity %-3s  beta(1 um) = %.3g  largest beta = %.3g  blown out: %s\n",
                  $1, $2, $4, $5, ($6 == "none" ? "nothing" : $6 " um") }' "$summary"
echo "Outputs: $sweep (and its sidecar .json), $summary, plot $out/03-veyra-sweep.svg"
