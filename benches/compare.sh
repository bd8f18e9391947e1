#!/usr/bin/env bash
# Field benchmark: meshbound against a plain pandas + numpy script on the same probe files.
#
#   benches/compare.sh N [DIR]
#
# Generates one synthetic field of N probes per mesh (the generator of
# examples/field_bench.rs: manufactured cp = phi0 + alpha h^2 with a no-change plateau and a
# noisy band, invented numbers) into DIR (a temporary folder, removed afterwards, when DIR is
# not given), then runs, one after the other on the same files:
#   1. `meshbound assess study.yaml` (the release binary; reads, estimates, writes the
#      per-point file),
#   2. `python3 benches/field_pandas.py` (the same computation and per-point file),
# prints wall time, CPU time (user + system) and peak memory of each, the speed ratio, and
# whether both files give the same class and order at every point.
#
# Needs python3 with pandas and numpy (`python3 -m pip install pandas`). The machine may be
# shared: look at the load average printed first, and compare CPU times as well as wall times.
set -euo pipefail
cd "$(dirname "$0")/.."
N=${1:-1000000}
DIR=${2:-}
if [ -z "$DIR" ]; then
    DIR=$(mktemp -d)
    trap 'rm -rf "$DIR"' EXIT
fi
mkdir -p "$DIR"
cargo build --release --quiet --bin meshbound --example field_bench
target/release/examples/field_bench "$N" --keep "$DIR" --mode generate >/dev/null
cat > "$DIR/study.yaml" <<'YAML'
# Synthetic benchmark field (invented data), written by benches/compare.sh.
format: 1
meshes:
  - {name: mesh1, size: 1}
  - {name: mesh2, size: 1.3}
  - {name: mesh3, size: 1.625}
fields:
  bench:
    id: probe
    columns: [cp]
    data: {mesh1: mesh1.csv, mesh2: mesh2.csv, mesh3: mesh3.csv}
    write: out/rust.csv
YAML

# Runs a command with /usr/bin/time; prints "wall user sys maxrss_kib".
timed() {
    /usr/bin/time -f "%e %U %S %M" -o "$DIR/time.txt" "$@" >"$DIR/log.txt" 2>&1 || {
        cat "$DIR/log.txt"
        exit 1
    }
    cat "$DIR/time.txt"
}

echo "field benchmark: $N probes per mesh, $(du -shc "$DIR"/mesh?.csv | tail -1 | cut -f1) of probe files, $(nproc) cores"
echo "load average before: $(cut -d' ' -f1-3 /proc/loadavg)"
read -r rw ru rs rm < <(timed target/release/meshbound assess "$DIR/study.yaml")
# OPENBLAS_* settings of this machine slow a current numpy; unset here only (no BLAS call is
# made by the script, so this only keeps the comparison fair).
read -r pw pu ps pm < <(timed env -u OPENBLAS_CORETYPE -u OPENBLAS_L2_SIZE \
    python3 benches/field_pandas.py --sizes 1 1.3 1.625 --id probe --columns cp \
    --out "$DIR/out/pandas.csv" "$DIR/mesh1.csv" "$DIR/mesh2.csv" "$DIR/mesh3.csv")
pandas_parts=$(cat "$DIR/log.txt")
awk -v n="$N" -v rw="$rw" -v ru="$ru" -v rs="$rs" -v rm="$rm" \
    -v pw="$pw" -v pu="$pu" -v ps="$ps" -v pm="$pm" 'BEGIN {
    printf "meshbound assess   %7.2f s wall  %7.2f s CPU  %7.0f MiB peak  %6.2f M points/s\n", rw, ru + rs, rm / 1024, n / rw / 1e6
    printf "pandas + numpy     %7.2f s wall  %7.2f s CPU  %7.0f MiB peak  %6.2f M points/s\n", pw, pu + ps, pm / 1024, n / pw / 1e6
    printf "ratio              %7.1f x wall  %7.1f x CPU\n", pw / rw, (pu + ps) / (ru + rs)
}'
echo "  ($pandas_parts)"
echo "load average after: $(cut -d' ' -f1-3 /proc/loadavg)"
python3 benches/field_pandas.py --columns cp --agree "$DIR/out/rust.csv" "$DIR/out/pandas.csv"
