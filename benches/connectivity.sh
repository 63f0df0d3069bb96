#!/usr/bin/env bash
# Prints the `strata connectivity` figures recorded in docs/performance.md: wall time and peak
# memory of seed maps for N participants of 91 x 109 x 91 x 600 float32 BOLD (.nii.gz), next
# to a single-core gzip decode of the same series (the rate that bounds streaming).
# Needs about 0.5 GB of disk per participant. Usage: bash benches/connectivity.sh [WORKDIR] [N]
set -euo pipefail
cd "$(dirname "$0")/.."
work="${1:-/tmp/strata-bench-bold}"
count="${2:-20}"
mkdir -p "$work"
cargo build --release --quiet
bin="${CARGO_TARGET_DIR:-target}/release/strata"
bench() { cargo bench --quiet --bench connectivity -- "$@"; }
if [ "$(ls "$work"/sub-*_bold.nii.gz 2>/dev/null | wc -l)" -lt "$count" ]; then
    echo "== generating $count series in $work"
    /usr/bin/time -f "generate_seconds %e" cargo bench --quiet --bench connectivity -- generate "$work" "$count"
fi
echo "== strata connectivity: seed maps (sphere), 7 confounds, censoring, $(nproc) threads"
/usr/bin/time -v "$bin" connectivity --bold "$work/sub-*_bold.nii.gz" \
    --confounds "$work/sub-*_confounds.tsv" --censor-column keep \
    --seed-sphere 0,-52,26 --radius 6 --out "$work/out-seed" --force --quiet \
    > "$work/run-seed.txt" 2> "$work/time-seed.txt"
grep -E "Maximum resident set size|Elapsed \(wall clock\)|User time|System time" "$work/time-seed.txt"
tail -1 "$work/run-seed.txt"
echo "== the same with one thread (per-participant time)"
first="$(ls "$work"/sub-*_bold.nii.gz | head -1)"
/usr/bin/time -v "$bin" connectivity --bold "$first" \
    --confounds "$work/sub-*_confounds.tsv" --censor-column keep \
    --seed-sphere 0,-52,26 --radius 6 --out "$work/out-one" --force --quiet --threads 1 \
    > "$work/run-one.txt" 2> "$work/time-one.txt"
grep -E "Maximum resident set size|Elapsed \(wall clock\)" "$work/time-one.txt"
echo "== single-core gzip decode of every series"
bench decode "$work"
