#!/bin/sh
# Short fuzz runs of every pairsight fuzz target (cargo-fuzz, libFuzzer).
#
#   tests/fuzz/run-short.sh              # each target for 20 s
#   FUZZ_SECONDS=600 tests/fuzz/run-short.sh read_table   # one target, longer
#   FUZZ_RUNS=20000 FUZZ_SEED=1 tests/fuzz/run-short.sh   # what CI runs
#
# Timed runs keep what they find under tests/fuzz/corpus/ for the next run.
# With FUZZ_RUNS, each target runs exactly that many inputs from a fixed
# seed (FUZZ_SEED, default 1) and a fresh corpus of the committed seeds only,
# so the run is the same every time: `cargo xtask test` cannot fail by
# chance, only on a real finding.
#
# cargo-fuzz needs nightly compiler features; on a stable toolchain
# RUSTC_BOOTSTRAP=1 unlocks them. AddressSanitizer is used when it builds,
# else no sanitizer (FUZZ_SANITIZER=none forces that). Exits non-zero when a
# target crashes; the crashing input is left under tests/fuzz/artifacts/.
set -eu

here=$(cd "$(dirname "$0")" && pwd)
root=$(cd "$here/../.." && pwd)
seconds=${FUZZ_SECONDS:-20}
sanitizer=${FUZZ_SANITIZER:-address}
targets=${*:-read_table study ratings pipeline}
runs=${FUZZ_RUNS:-}
scratch=$(mktemp -d)
trap 'rm -rf "$scratch"' EXIT INT TERM

if ! command -v cargo-fuzz >/dev/null 2>&1; then
    echo "installing cargo-fuzz" >&2
    cargo install cargo-fuzz --locked
fi
export RUSTC_BOOTSTRAP=1
cd "$root"

if ! cargo fuzz build --fuzz-dir "$here" -O -s "$sanitizer" >/dev/null 2>&1; then
    echo "building with sanitizer '$sanitizer' failed; building without one" >&2
    sanitizer=none
    cargo fuzz build --fuzz-dir "$here" -O -s none
fi

for target in $targets; do
    if [ -n "$runs" ]; then
        corpus="$scratch/$target"
        limit="-runs=$runs -seed=${FUZZ_SEED:-1}"
        what="$runs runs from seed ${FUZZ_SEED:-1}"
    else
        corpus="$here/corpus/$target"
        limit="-max_total_time=$seconds"
        what="$seconds s"
    fi
    mkdir -p "$corpus"
    case $target in
        read_table) seeds="$root/tests/fixtures/bad"; dict="$here/csv.dict" ;;
        study) seeds="$root/tests/fixtures/bad"; dict="$here/toml.dict" ;;
        ratings) seeds="$here/seeds/ratings"; dict="$here/csv.dict" ;;
        pipeline) seeds="$here/seeds/pipeline"; dict="$here/csv.dict" ;;
        *) echo "unknown target $target" >&2; exit 2 ;;
    esac
    echo "== $target: $what, sanitizer $sanitizer" >&2
    # -timeout: an input taking over 10 s is reported as a hang.
    # shellcheck disable=SC2086 # $limit is two options
    cargo fuzz run --fuzz-dir "$here" -O -s "$sanitizer" "$target" "$corpus" "$seeds" -- \
        $limit -timeout=10 -rss_limit_mb=4096 -dict="$dict" \
        -print_final_stats=1
    echo "ok: fuzz target $target, $what, sanitizer $sanitizer: no crash, hang or memory blow-up"
done
