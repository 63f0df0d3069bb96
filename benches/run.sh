#!/usr/bin/env bash
# Prints the performance figures recorded in docs/performance.md: seconds per stage and peak
# memory of `strata run` on the two benchmark cohorts, the similarity step's rate next to numpy's
# (OpenBLAS) X @ X.T on the same standardised matrix, and reading speed against single-core gzip.
# The runs leave out the null test and the stability subsamples (--null-draws 0 --subsamples 0):
# those are measured on their own by benches/validation.sh. Peak memory per stage is in each
# run's provenance.json. Needs python3 with numpy (pip install numpy).
# Usage: bash benches/run.sh [WORKDIR]
set -euo pipefail
cd "$(dirname "$0")/.."
work="${1:-/tmp/strata-bench}"
mkdir -p "$work"
cargo build --release --quiet
bench() { cargo bench --quiet --bench stages -- "$@"; }
for kind in matrices maps; do
    data="$work/$kind"
    if [ ! -f "$data/participants.tsv" ]; then
        echo "== generating the $kind benchmark cohort in $data"
        bench generate "$kind" "$data"
    fi
    pattern=$([ "$kind" = maps ] && echo "$data/maps/sub-*_seedmap.nii.gz" || echo "$data/matrices/sub-*_conn.npy")
    rm -rf "$work/out-$kind"
    echo "== strata run ($kind)"
    /usr/bin/time -v ./target/release/strata run --inputs "$pattern" --participants "$data/participants.tsv" \
        --group-column diagnosis --contrast insomnia,control --out "$work/out-$kind" --quiet --null-draws 0 --subsamples 0 \
        > "$work/run-$kind.txt" 2> "$work/time-$kind.txt"
    grep -E "Maximum resident set size|Elapsed \(wall clock\)" "$work/time-$kind.txt"
    python3 - "$work/out-$kind/provenance.json" <<'PY'
import json, sys
provenance = json.load(open(sys.argv[1]))
peaks = dict(provenance.get("stage_peak_memory_bytes", []))
for stage, seconds in provenance["stage_seconds"]:
    peak = f"  peak so far {peaks[stage] / 1e6:6.0f} MB" if stage in peaks else ""
    print(f"stage {stage:14s} {seconds:8.2f} s{peak}")
PY
    echo "== in-process figures ($kind)"
    bench similarity "$data" | tee "$work/similarity-$kind.txt"
    python3 - "$data/standardised.npy" <<'PY'
import sys, time
import numpy as np
z = np.load(sys.argv[1])
n, f = z.shape
best = float("inf")
for _ in range(3):
    t = time.perf_counter(); s = z @ z.T; best = min(best, time.perf_counter() - t)
print(f"numpy {np.__version__} X @ X.T seconds {best:.3f}  gflops_full_equivalent {2*n*n*f/best/1e9:.1f}")
print(f"feature_matrix_mb {z.nbytes/1e6:.0f}  similarity_matrix_mb {n*n*4/1e6:.0f}")
PY
    rm -f "$data/standardised.npy"
done
