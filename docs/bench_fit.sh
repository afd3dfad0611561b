#!/usr/bin/env bash
# Wall time of `rxnet fit` on the bundled demo: 6 parameters (k and Ea of three steps) fitted
# to 5 batch runs of a 5-species network (networks/amine_alkylation_batch.yaml, invented demo
# values; its data were made by tests/reference/fit_demo.py). The speed target of the fitting
# feature is under one second on one core. Benchmark only: no test times anything.
#
#   docs/bench_fit.sh            # best of 5 runs of each variant
#   REPEAT=10 docs/bench_fit.sh
#
# One core: RAYON_NUM_THREADS=1, and the process pinned to CPU 0 with taskset when it exists.
# Variants: the default (one Levenberg-Marquardt descent from the study's guess, and the
# multistart only if that first fit ends poorly; on the demo it does not), `--starts 1`, and a
# forced six-start multistart. Each line prints the best and the median wall time of the whole process
# (start-up and loading included) and the fit's iterations and convergence from its JSON.
set -euo pipefail

cd "$(dirname "$0")/.."
REPEAT="${REPEAT:-5}"
STUDY=networks/amine_alkylation_batch.yaml
cargo build --release --quiet
BIN="${CARGO_TARGET_DIR:-target}/release/rxnet"
PIN=()
if command -v taskset >/dev/null 2>&1; then PIN=(taskset -c 0); fi

echo "machine: $(nproc) cores, $(grep -m1 'model name' /proc/cpuinfo | cut -d: -f2 | xargs), load $(cut -d' ' -f1-3 /proc/loadavg)"
echo "study: $STUDY (6 parameters, 5 runs, 5 species); RAYON_NUM_THREADS=1 ${PIN[*]:-}"

bench() {
    local label="$1"; shift
    local times=() out=""
    for _ in $(seq "$REPEAT"); do
        local t0 t1
        t0=$(date +%s.%N)
        out=$(RAYON_NUM_THREADS=1 "${PIN[@]}" "$BIN" fit "$STUDY" --format json "$@")
        t1=$(date +%s.%N)
        times+=("$(awk -v a="$t0" -v b="$t1" 'BEGIN { printf "%.6f", b - a }')")
    done
    local sorted best median
    sorted=$(printf '%s\n' "${times[@]}" | sort -g)
    best=$(echo "$sorted" | head -1)
    median=$(echo "$sorted" | sed -n "$(( (REPEAT + 1) / 2 ))p")
    local iters conv
    iters=$(echo "$out" | grep -o '"iterations": *[0-9]*' | head -1 | grep -o '[0-9]*$' || true)
    conv=$(echo "$out" | grep -o '"converged": *[a-z]*' | head -1 | grep -o '[a-z]*$' || true)
    printf '%-22s best %.3f s   median %.3f s   iterations %s   converged %s\n' \
        "$label" "$best" "$median" "${iters:-?}" "${conv:-?}"
}

bench "fit (default)"
bench "fit --starts 1" --starts 1
bench "fit --starts 6" --starts 6
