# Sourced by every demo script: where the holdfast binary and the outputs are, and Veyra's
# (invented) stellar parameters. Not a script of its own.
holdfast="${HOLDFAST:-$here/../build/holdfast}"
out="${HOLDFAST_EXAMPLES_OUT:-$here/out}"
mkdir -p "$out"

# The plots are drawn by gnuplot (Debian: gnuplot-nox, installed by scripts/bootstrap).
if ! command -v gnuplot >/dev/null 2>&1; then
    echo "$(basename "$0"): gnuplot is needed for the plots (Debian: apt-get install gnuplot-nox)" >&2
    exit 2
fi

# Veyra: an invented K dwarf.
veyra=(--luminosity 0.34 Lsun --mass 0.78 Msun --teff 4900 K)

# csv_get FILE COLUMN [ROW]: the value in column COLUMN (by header name) of data row ROW
# (default 1) of a holdfast CSV. Handles RFC 4180 quoting (a verdict may hold commas) and
# works with any POSIX awk (Debian's default is mawk).
csv_get() {
    awk -v want="$2" -v row="${3:-1}" '
    function split_csv(line, f,    n, i, c, q, cur) {
        n = 0; cur = ""; q = 0
        for (i = 1; i <= length(line); i++) {
            c = substr(line, i, 1)
            if (q) {
                if (c == "\"" && substr(line, i + 1, 1) == "\"") { cur = cur "\""; i++ }
                else if (c == "\"") q = 0
                else cur = cur c
            } else if (c == "\"") q = 1
            else if (c == ",") { f[++n] = cur; cur = "" }
            else cur = cur c
        }
        f[++n] = cur
        return n
    }
    NR == 1 { n = split_csv($0, head); for (i = 1; i <= n; i++) if (head[i] == want) col = i; next }
    NR == row + 1 { split_csv($0, f); print f[col]; exit }
    END { if (!col) { print "csv_get: no column " want > "/dev/stderr"; exit 1 } }
    ' "$1"
}
