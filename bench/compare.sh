#!/usr/bin/env bash
# Side-by-side benchmark of `antinode modes` against the SciPy route (eigsh shift-invert with a
# CHOLMOD factorization, the fastest variant of the baseline harness: factor on 2 threads, solves
# on 1) on the same MatrixMarket files, in one run, and prints the ratios.
#
# Usage: bench/compare.sh [SIZES] [COUNTS] [SUPPORTS]
#   SIZES    DOF targets of the generated tubes, default "100k 400k" (k = 1000)
#   COUNTS   numbers of modes, default "20 60"
#   SUPPORTS "clamped free" (default) or one of them
# Environment:
#   BASELINE  folder of the baseline harness (eigsh_bench.py, gen_plate.py, setup.sh),
#             default ../shared/bench beside this checkout
#   VENV      its Python environment, default ~/.cache/antinode-bench/venv (created with the
#             harness's setup.sh when missing; needs root on Debian 12)
#   MATS      where generated matrices are kept, default target/bench-mats
#   RESULTS   JSON-lines file the raw results are appended to, default target/bench-results.jsonl
# Free-free tubes have six rigid-body modes: the baseline uses the shift σ = −10 rad²/s² there (its
# README); antinode chooses its own shift below the spectrum.
set -euo pipefail
here=$(cd "$(dirname "$0")/.." && pwd)
baseline=${BASELINE:-$here/../shared/bench}
venv=${VENV:-$HOME/.cache/antinode-bench/venv}
mats=${MATS:-$here/target/bench-mats}
results=${RESULTS:-$here/target/bench-results.jsonl}
sizes=${1:-100k 400k}
counts=${2:-20 60}
supports=${3:-clamped free}
py=$venv/bin/python
for f in eigsh_bench.py gen_plate.py setup.sh; do
    [[ -f $baseline/$f ]] || { echo "error: $baseline/$f not found; set BASELINE" >&2; exit 1; }
done
[[ -x $py ]] || bash "$baseline/setup.sh" "$venv"
[[ -x /usr/bin/time ]] || { echo "error: /usr/bin/time (Debian package time) is needed for peak memory" >&2; exit 1; }
(cd "$here" && cargo build --release --quiet -p antinode-cli)
bin=$here/target/release/antinode
mkdir -p "$mats" "$(dirname "$results")"
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT

echo "load average at the start: $(cut -d' ' -f1-3 /proc/loadavg)"
echo "machine: $(nproc) cores, $(awk '/MemTotal/ {printf "%.0f GiB", $2/1048576}' /proc/meminfo), $(grep -m1 'model name' /proc/cpuinfo | cut -d: -f2 | sed 's/^ //'); $(date -u +%F)"
printf '%-22s %4s | %9s %9s %6s | %9s %9s %6s | %8s %8s %6s | %8s %8s | %s\n' \
    case modes "cholmod s" "ours s" ratio "wall ref" "wall ours" ratio "ref MiB" "our MiB" ratio \
    "res ref" "res ours" "ours: factor + solves, Sturm"
for size in $sizes; do
    dofs=$(( ${size%k} * 1000 ))
    for bc in $supports; do
        dir=$mats/tube${size}_$bc
        if [[ ! -f $dir/K.mtx ]]; then
            "$py" "$baseline/gen_plate.py" --geom tube --dofs "$dofs" --bc "$bc" --out "$dir" >/dev/null
        fi
        sigma=0
        [[ $bc == free ]] && sigma=-10
        for n in $counts; do
            label=tube${size}_${bc}_nev$n
            env -u OPENBLAS_CORETYPE -u OPENBLAS_L2_SIZE OPENBLAS_NUM_THREADS=1 /usr/bin/time -f '%M %e' -o "$work/ref.time" \
                "$py" "$baseline/eigsh_bench.py" "$dir/K.mtx" "$dir/M.mtx" --nev "$n" --sigma "$sigma" \
                --factor cholmod --threads-factor 2 --threads-solve 1 --label "$label" > "$work/ref.json"
            /usr/bin/time -f '%M %e' -o "$work/ours.time" "$bin" modes --stiffness "$dir/K.mtx" --mass "$dir/M.mtx" \
                --count "$n" --json --out "$work/out" > "$work/ours.json"
            "$py" - "$label" "$n" "$work" "$results" <<'PY'
import json, sys
label, n, work, results = sys.argv[1], int(sys.argv[2]), sys.argv[3], sys.argv[4]
ref = json.loads(open(f"{work}/ref.json").read().strip().splitlines()[-1])
ours = json.load(open(f"{work}/ours.json"))
def usage(name):
    kib, wall = open(f"{work}/{name}.time").read().split()[-2:]
    return int(kib) / 1024, float(wall)
ref_mib, ref_wall = usage("ref")
our_mib, our_wall = usage("ours")
s = ours["solver"]
st = s["stats"]
# Both sides without reading the files: the baseline's shift + factor (ordering included) + eigsh,
# our symbolic analysis + every factorization + Lanczos + Sturm check.
ref_s = ref["t_solve_total_s"]
our_s = s["analysis_seconds"] + s["solve_seconds"]
ref_res = ref["max_rel_residual_elastic"] if ref.get("max_rel_residual_elastic") is not None else ref["max_rel_residual"]
our_res = max(m["relative_residual"] for m in ours["modes"] if not m["zero_energy"])
sturm = ours["sturm_check"]
f_ref, f_ours = ref["freq_hz"], [m["frequency_hz"] for m in ours["modes"]]
elastic = [i for i, m in enumerate(ours["modes"]) if not m["zero_energy"]]
dev = max(abs(f_ours[i] - f_ref[i]) / f_ref[i] for i in elastic) if len(f_ref) == len(f_ours) else float("nan")
# The issue's overhead measure: the whole solve against one factorization plus the block solves.
one_plus_solves = st['factor_seconds'] / max(st['factorizations'], 1) + st['solve_seconds']
note = (f"{st['factorizations']} fact. {st['factor_seconds']:.2f} s + {st['block_solves']} block solves "
        f"{st['solve_seconds']:.2f} s; solve / (1 fact. + solves) = {s['solve_seconds'] / one_plus_solves:.2f}; "
        f"Sturm {'passed' if sturm['passed'] else 'FAILED'}; max |Δf|/f vs ref {dev:.1e}; ref {ref['n_opinv']} solves")
print(f"{label:<22} {n:>4} | {ref_s:9.2f} {our_s:9.2f} {ref_s / our_s:5.2f}x | {ref_wall:9.2f} {our_wall:9.2f} "
      f"{ref_wall / our_wall:5.2f}x | {ref_mib:8.0f} {our_mib:8.0f} {our_mib / ref_mib:5.2f}x | {ref_res:8.1e} {our_res:8.1e} | {note}")
with open(results, "a") as f:
    f.write(json.dumps({"label": label, "modes": n, "reference": ref, "reference_peak_mib": ref_mib,
                        "reference_wall_s": ref_wall, "ours_solver": s, "ours_sturm": sturm,
                        "ours_peak_mib": our_mib, "ours_wall_s": our_wall, "ours_max_residual": our_res}) + "\n")
PY
        done
    done
done
echo "load average at the end: $(cut -d' ' -f1-3 /proc/loadavg) (a quiet 2-core machine shows about 1 during a run)"
echo "ratios: time = cholmod / ours (above 1: ours faster); memory = ours / cholmod (below 1: ours smaller)"
