#!/usr/bin/env bash
# Checks the tail extrapolation of false-alarm rates against a brute-force week.
#
# For one room per product of the default suite (benches/week-check/suite.yaml: the porch
# with palms in gusts for the 2.45 GHz corridor module, the lounge with a ceiling fan for the
# 24 GHz ceiling module) and every registered detector, it
#   1. soaks each room for 1/100 of a week (1.68 h of noise) and fits the tail of the alarm
#      statistic: the 1-per-week threshold with its 95 % profile-likelihood interval;
#   2. soaks the same rooms for a whole week (168 h, other seeds) and counts the 1-per-week
#      threshold: the product's target is one per week, so calibration sets the threshold at
#      which the week holds at most one false alarm (alarm clusters separated by the hold);
#   3. prints both (and the long run's own fit) and how many counted thresholds lie inside
#      the short fit's interval (benches/examples/week_check.rs).
# A counted threshold from one week is itself noisy (it sits between the largest and the
# second-largest cluster maxima of the week), so an occasional miss is expected; a fit that is
# systematically off shows as many misses on one side.
#
# Usage: benches/week-check.sh [OUT_FILE]   (default benches/results/week-check.txt)
# Needs cargo; takes 15 to 30 minutes on 2 cores (the week is 2 x 168 h of signal through
# every detector). The output starts with the date, the machine and the commit.
# WEEK_CHECK_DETECTORS="os-cfar band-ratio energy-c" runs only those registered detectors
# (every one of them in both rooms) instead of all; the output's first line names them.
set -euo pipefail
cd "$(dirname "$0")/.."
out_file="${1:-benches/results/week-check.txt}"
work="$(mktemp -d)"
# WEEK_CHECK_KEEP=DIR keeps the two run folders there (to look at, or to rerun the comparison).
if [ -n "${WEEK_CHECK_KEEP:-}" ]; then work="$WEEK_CHECK_KEEP"; mkdir -p "$work"; else trap 'rm -rf "$work"' EXIT; fi

# ECHOBENCH_BIN and WEEK_CHECK_BIN may name binaries built beforehand (then nothing is built).
bin="${ECHOBENCH_BIN:-target/release/echobench}"
check="${WEEK_CHECK_BIN:-target/release/examples/week_check}"
# Two builds: with `--example`, cargo builds only examples of every package named, so one
# command would leave a stale echobench binary in place.
if [ -z "${ECHOBENCH_BIN:-}" ]; then cargo build --release -q -p echobench --bin echobench; fi
if [ -z "${WEEK_CHECK_BIN:-}" ]; then cargo build --release -q -p echobench-benches --example week_check; fi
cp benches/week-check/suite.yaml "$work/short.yaml"
sed -e 's/calibration_hours: 1.68$/calibration_hours: 168/' \
    -e 's/^seed: 20261205$/seed: 20261206/' \
    benches/week-check/suite.yaml > "$work/long.yaml"
# The suites name scene files relative to themselves.
sed -i "s|file: ../../scenarios/|file: $PWD/scenarios/|" "$work/short.yaml" "$work/long.yaml"
grep -q "calibration_hours: 168" "$work/long.yaml"
detectors="all registered detectors"
if [ -n "${WEEK_CHECK_DETECTORS:-}" ]; then
    list=""
    for d in $WEEK_CHECK_DETECTORS; do list="$list  - plugin: $d\n"; done
    sed -i "s|^  - registered: all\$|${list%\\n}|" "$work/short.yaml" "$work/long.yaml"
    grep -q "^  - plugin: " "$work/long.yaml"
    detectors="detectors $WEEK_CHECK_DETECTORS only"
fi

start=$(date +%s)
"$bin" run "$work/short.yaml" --out "$work/short" --replace > "$work/short.log" 2>&1
"$bin" run "$work/long.yaml" --out "$work/long" --replace > "$work/long.log" 2>&1
seconds=$(( $(date +%s) - start ))

{
    echo "# benches/week-check.sh, $(date -u +%Y-%m-%d), $(nproc) cores, $(uname -m), $(grep -m1 'model name' /proc/cpuinfo | cut -d: -f2 | sed 's/^ *//'), commit $(git rev-parse --short HEAD), ${seconds} s, $detectors"
    "$check" "$work/short" "$work/long"
} | tee "$out_file"
