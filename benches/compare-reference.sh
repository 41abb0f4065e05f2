#!/usr/bin/env bash
# Times echobench against the numpy/scipy reference pipeline on the same work.
#
# The reference (../shared/bench/ref_pipeline.py, run with its defaults) and the
# suite scenarios/bench/reference-workload.yaml both make 200 trials of 30 s at
# 2 kHz (12 M samples), filter, quantize and score them with the same three
# detectors. The script runs them alternately, three rounds of
#     reference (default threads), echobench --threads 1, echobench --threads 2
# so that slow phases of a shared machine hit all three alike, then prints
# each run and the min / median of wall time, throughput and peak RSS, and the
# throughput ratio (median echobench / median reference) per thread setting.
# With REF_OMP1=1 each round also runs the reference with OMP_NUM_THREADS=1:
# on a loaded machine OpenBLAS's second thread, spinning after each small
# matrix product, can slow the default setting down by up to 2×.
#
# What is timed:
# - reference: `wall_s` of its JSON line (pipeline from setup to scoring,
#   without the interpreter start and the imports), samples/s = its
#   `throughput_samples_per_s` (200 × 60 000 samples / wall_s);
# - echobench: `wall_s` of timing.json (calibration and test trials, from the
#   loaded suite to the tallies, without process start, suite reading and
#   writing the outputs), samples/s = timing.json `samples` (the 12 M test
#   samples; the 8 calibration trials, 4 % more work, are not counted) / wall_s;
# - both: the whole process (`elapsed`), its CPU time (user + system, less
#   sensitive than wall time to other jobs on the machine, but it counts
#   OpenBLAS's spinning threads) and its peak RSS, from /usr/bin/time.
#
# Usage: benches/compare-reference.sh [ROUNDS]     (default 3 rounds)
# Needs: python3 with numpy and scipy, GNU time at /usr/bin/time, cargo (only
# when target/release/echobench is missing). Results stay in a temporary folder
# whose path is printed at the end.
set -euo pipefail

die() {
    echo "compare-reference: $*" >&2
    exit 1
}

rounds="${1:-3}"
[[ "$rounds" =~ ^[1-9][0-9]*$ ]] || die "ROUNDS must be a positive integer, got '$rounds'"

script_dir="$(cd "$(dirname "${BASH_SOURCE[0]}")" && pwd)"
root="$(cd "$script_dir/.." && pwd)"
ref_script="$root/../shared/bench/ref_pipeline.py"
[[ -f "$ref_script" ]] || die "reference pipeline not found at $ref_script"
ref_script="$(realpath "$ref_script")"
suite="$root/scenarios/bench/reference-workload.yaml"
[[ -f "$suite" ]] || die "suite not found at $suite"

command -v python3 >/dev/null 2>&1 || die "python3 is not installed (the reference pipeline needs it)"
if ! python3 -c 'import numpy, scipy.signal, scipy.fft, scipy.stats' 2>/dev/null; then
    die "python3 cannot import numpy and scipy: install them with 'pip install numpy scipy'"
fi
[[ -x /usr/bin/time ]] || die "/usr/bin/time (GNU time) is missing: install it with 'apt-get install -y time'"
/usr/bin/time -f '%M' true 2>/dev/null || die "/usr/bin/time does not take -f: GNU time is needed ('apt-get install -y time')"

binary="$root/target/release/echobench"
if [[ ! -x "$binary" ]]; then
    command -v cargo >/dev/null 2>&1 || die "$binary is missing and cargo is not installed to build it"
    echo "building the release binary (target/release/echobench is missing)..." >&2
    (cd "$root" && cargo build --release -p echobench) || die "cargo build --release -p echobench failed"
    [[ -x "$binary" ]] || die "the build finished but $binary is still missing"
fi

work="$(mktemp -d "${TMPDIR:-/tmp}/compare-reference.XXXXXX")"
# Run a private copy: a rebuild of target/ by someone else during the runs
# would otherwise swap the binary between rounds.
cp "$binary" "$work/echobench"
results="$work/results.tsv"
printf 'round\ttool\tthreads\twall_s\tsamples\tsamples_per_s\telapsed_s\tcpu_s\tpeak_rss_kib\tauc_energy\tauc_cfar\tauc_band_ratio\n' >"$results"

load_before="$(uptime)"
echo "machine: $(nproc) cpus; $load_before" >&2
echo "work folder: $work" >&2

# run_reference ROUND [OMP_THREADS]: the reference with its default threads, or OMP_NUM_THREADS set.
run_reference() {
    local round="$1" omp="${2:-}"
    local out="$work/ref-$1${omp:+-omp$omp}.json" timefile="$work/ref-$1${omp:+-omp$omp}.time"
    # The default run clears the thread variables so that it is the default whatever the caller set.
    local -a env_set=(env -u OMP_NUM_THREADS -u OPENBLAS_NUM_THREADS -u MKL_NUM_THREADS -u GOTO_NUM_THREADS)
    if [[ -n "$omp" ]]; then
        env_set+=("OMP_NUM_THREADS=$omp")
    fi
    (cd "$root" && "${env_set[@]}" /usr/bin/time -f '%e %M %U %S' -o "$timefile" python3 "$ref_script" --quiet >"$out") ||
        die "the reference pipeline failed in round $round (output in $out)"
    python3 - "$out" "$timefile" "$round" >>"$results" <<'EOF'
import json, sys
out, timefile, rnd = sys.argv[1:4]
lines = [l for l in open(out) if l.strip().startswith("{")]
if not lines:
    sys.exit(f"no JSON line in {out}")
r = json.loads(lines[-1])
elapsed, rss, user, system = open(timefile).read().split()[-4:]
cpu = round(float(user) + float(system), 2)
threads = r["threads_env"].get("OMP_NUM_THREADS", "unset")
threads = "default" if threads == "unset" else "omp" + threads
a = r["auc"]
print("\t".join(map(str, [rnd, "reference", threads, r["wall_s"], r["total_samples"],
      r["throughput_samples_per_s"], elapsed, cpu, rss, a["energy"], a["cfar"], a["band_ratio"]])))
EOF
}

run_echobench() {
    local round="$1" threads="$2"
    local out="$work/echobench-$1-t$2" timefile="$work/echobench-$1-t$2.time"
    (cd "$root" && /usr/bin/time -f '%e %M %U %S' -o "$timefile" \
        "$work/echobench" run "$suite" --out "$out" --threads "$threads" >"$out.log" 2>&1) ||
        die "echobench failed in round $round with $threads threads (log in $out.log)"
    python3 - "$out" "$timefile" "$round" "$threads" >>"$results" <<'EOF'
import json, sys
out, timefile, rnd, threads = sys.argv[1:5]
t = json.load(open(f"{out}/timing.json"))
s = json.load(open(f"{out}/summary.json"))
auc = {d["label"]: d["trial_auc"] for d in s["detectors"]}
elapsed, rss, user, system = open(timefile).read().split()[-4:]
cpu = round(float(user) + float(system), 2)
print("\t".join(map(str, [rnd, "echobench", threads, round(t["wall_s"], 4), t["samples"],
      round(t["samples"] / t["wall_s"]), elapsed, cpu, rss,
      round(auc["energy"], 4), round(auc["ca-cfar"], 4), round(auc["band-ratio"], 4)])))
EOF
}

for ((round = 1; round <= rounds; round++)); do
    echo "round $round/$rounds: reference..." >&2
    run_reference "$round"
    echo "round $round/$rounds: echobench --threads 1..." >&2
    run_echobench "$round" 1
    echo "round $round/$rounds: echobench --threads 2..." >&2
    run_echobench "$round" 2
    if [[ "${REF_OMP1:-0}" == 1 ]]; then
        echo "round $round/$rounds: reference, OMP_NUM_THREADS=1..." >&2
        run_reference "$round" 1
    fi
done
load_after="$(uptime)"

python3 - "$results" "$load_before" "$load_after" <<'EOF'
import csv, statistics, sys
path, before, after = sys.argv[1:4]
rows = list(csv.DictReader(open(path), delimiter="\t"))
print("runs (wall_s: the pipeline's own timer; elapsed, CPU (user + system) and peak RSS: /usr/bin/time, whole process)")
print(f"{'round':>5} {'tool':<10} {'threads':>7} {'wall_s':>8} {'Msamples/s':>10} {'elapsed_s':>9} {'cpu_s':>7} {'RSS_MiB':>8}   AUC energy / CFAR / band ratio")
for r in rows:
    print(f"{r['round']:>5} {r['tool']:<10} {r['threads']:>7} {float(r['wall_s']):8.3f} "
          f"{float(r['samples_per_s']) / 1e6:10.3f} {float(r['elapsed_s']):9.2f} {float(r['cpu_s']):7.2f} "
          f"{int(r['peak_rss_kib']) / 1024:8.1f}   {r['auc_energy']} / {r['auc_cfar']} / {r['auc_band_ratio']}")
groups = {}
for r in rows:
    groups.setdefault((r["tool"], r["threads"]), []).append(r)
print()
print(f"{'':<22} {'wall_s min/median':>18} {'Msamples/s best/median':>23} {'trial-s/s median':>16} {'CPU s median':>12} {'peak RSS MiB max':>16}")
medians = {}
for (tool, threads), rs in groups.items():
    wall = [float(r["wall_s"]) for r in rs]
    sps = [float(r["samples_per_s"]) for r in rs]
    rss = [int(r["peak_rss_kib"]) / 1024 for r in rs]
    cpu = [float(r["cpu_s"]) for r in rs]
    medians[(tool, threads)] = statistics.median(sps)
    trial_s = statistics.median(sps) / 2000.0      # 2 kHz: samples/s over fs = trial-seconds of signal per second
    name = f"{tool} ({threads} thr)" if tool == "echobench" else f"{tool} ({threads})"
    print(f"{name:<22} {min(wall):8.3f} / {statistics.median(wall):<7.3f} "
          f"{max(sps) / 1e6:11.3f} / {statistics.median(sps) / 1e6:<9.3f} {trial_s:16.0f} "
          f"{statistics.median(cpu):12.2f} {max(rss):16.1f}")
print()
for (ref_tool, ref_threads), ref in medians.items():
    if ref_tool != "reference":
        continue
    for (tool, threads), v in medians.items():
        if tool == "echobench":
            print(f"throughput ratio, median echobench --threads {threads} / median reference ({ref_threads}): {v / ref:.2f}")
print()
print(f"load before: {before.strip()}")
print(f"load after:  {after.strip()}")
EOF
echo "results: $results" >&2
