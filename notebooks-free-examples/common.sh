# Sourced by every demo script: where the holdfast binary and the outputs are, and Veyra's
# (invented) stellar parameters. Not a script of its own.
holdfast="${HOLDFAST:-$here/../build/holdfast}"
out="${HOLDFAST_EXAMPLES_OUT:-$here/out}"
mkdir -p "$out"

# Veyra: an invented K dwarf.
veyra=(--luminosity 0.34 Lsun --mass 0.78 Msun --teff 4900 K)
