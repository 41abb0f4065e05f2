#!/usr/bin/env bash
# The fuzz gate. Builds the fuzz targets on the stable toolchain with libFuzzer's coverage
# flags, replays every corpus input once (the committed finds in fuzz/corpus/ and the
# project's own test files), then explores each target for a fixed time. A crash, a
# timeout or an input over the memory limit fails the script (exit 1); its input is copied
# into fuzz/corpus/TARGET/ so that the fix is replayed from then on.
#
#   fuzz/run.sh [SECONDS_PER_TARGET]   explore this long per target (default 10; 0: replay only)
#   fuzz/run.sh --self-test            a test build with a planted crash must fail the replay
#
# Longer runs: fuzz/run.sh 3600, or one target by hand (see the README's "Fuzzing").
set -euo pipefail
cd "$(dirname "$0")"

TARGETS=(yaml_reader suite_loader label_reader wav_reader)
RSS_LIMIT_MB=2048      # per process; a target needing more has a memory bug
TIMEOUT_S=10           # per input; the readers take milliseconds on any file CI holds
host=$(rustc -vV | sed -n 's/^host: //p')
export CARGO_TARGET_DIR="${CARGO_TARGET_DIR:-$PWD/../target/fuzz}"
# libFuzzer's instrumentation through stable rustc flags (what cargo-fuzz passes, less the
# nightly-only sanitizer): edge counters, the PC table and comparison tracing.
export RUSTFLAGS="-Cpasses=sancov-module -Cllvm-args=-sanitizer-coverage-level=3 \
-Cllvm-args=-sanitizer-coverage-inline-8bit-counters -Cllvm-args=-sanitizer-coverage-pc-table \
-Cllvm-args=-sanitizer-coverage-trace-compares --cfg fuzzing -Cdebug-assertions -Coverflow-checks"
bin_dir="$CARGO_TARGET_DIR/$host/release"
work="$CARGO_TARGET_DIR/work"

build() {
    # --target keeps RUSTFLAGS off build scripts and proc macros.
    cargo build --quiet --release --target "$host" "$@"
}

# The seeds each target starts from: the project's test and example files.
seed() {
    local target=$1 dir="$work/seeds/$1"
    rm -rf "$dir"
    mkdir -p "$dir"
    case $target in
        yaml_reader)
            cp ../tests/bad-scenes/*.yaml ../tests/bad-suites/*.yaml "$dir"/ 2>/dev/null || true
            find ../scenarios -name '*.yaml' -exec cp {} "$dir"/ \; ;;
        suite_loader)
            cp ../tests/bad-suites/*.yaml "$dir"/ 2>/dev/null || true
            cp ../scenarios/*.yaml "$dir"/ ;;
        label_reader | wav_reader) ;;  # their seeds are committed in fuzz/corpus/
    esac
    mkdir -p "corpus/$target"
}

# Replays every input of the given folders once; fails on any crash.
replay() {
    local target=$1
    shift
    "$bin_dir/$target" -runs=0 -rss_limit_mb=$RSS_LIMIT_MB -timeout=$TIMEOUT_S \
        -artifact_prefix="$work/artifacts/$target-" "$@" >"$work/$target-replay.log" 2>&1
}

keep_crashes() {
    local target=$1 found=0
    for file in "$work/artifacts/$target-"*; do
        [ -e "$file" ] || continue
        cp "$file" "corpus/$target/"
        echo "fuzz: $target: crashing input kept as fuzz/corpus/$target/$(basename "$file")" >&2
        found=1
    done
    return $found
}

if [ "${1:-}" = "--self-test" ]; then
    mkdir -p "$work/artifacts" "$work/planted"
    rm -f "$work/artifacts/"*
    build --bin planted_crash
    printf 'ECHOBENCH-PLANTED-CRASH\n' >"$work/planted/planted.yaml"
    if replay planted_crash "$work/planted"; then
        echo "fuzz self-test: FAILED: the replay passed an input that crashes the test build" >&2
        exit 1
    fi
    grep -q 'the planted crash of the fuzz self-test' "$work/planted_crash-replay.log" || {
        echo "fuzz self-test: FAILED: the replay failed, but not on the planted crash:" >&2
        tail -20 "$work/planted_crash-replay.log" >&2
        exit 1
    }
    rm -f "$work/artifacts/"*
    echo "fuzz self-test: the planted crash fails the replay, as it must"
    exit 0
fi

seconds=${1:-10}
mkdir -p "$work/artifacts"
rm -f "$work/artifacts/"*
build --bins
status=0
for target in "${TARGETS[@]}"; do
    seed "$target"
    if replay "$target" "corpus/$target" "$work/seeds/$target"; then
        echo "fuzz: $target: replayed $(find "corpus/$target" "$work/seeds/$target" -type f | wc -l) inputs"
    else
        echo "fuzz: $target: the corpus replay failed:" >&2
        tail -30 "$work/$target-replay.log" >&2
        keep_crashes "$target" || true
        status=1
        continue
    fi
    if [ "$seconds" -gt 0 ]; then
        mkdir -p "$work/explore/$target"
        if "$bin_dir/$target" -max_total_time="$seconds" -rss_limit_mb=$RSS_LIMIT_MB \
            -timeout=$TIMEOUT_S -artifact_prefix="$work/artifacts/$target-" \
            "$work/explore/$target" "corpus/$target" "$work/seeds/$target" \
            >"$work/$target-explore.log" 2>&1; then
            echo "fuzz: $target: explored ${seconds} s, $(grep -o 'cov: [0-9]*' "$work/$target-explore.log" | tail -1)"
        else
            echo "fuzz: $target: exploration found a crash:" >&2
            tail -30 "$work/$target-explore.log" >&2
            keep_crashes "$target" || true
            status=1
        fi
    fi
done
exit $status
