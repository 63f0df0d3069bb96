#!/usr/bin/env bash
# Prints the validation-stage figures recorded in docs/performance.md: the rotation null test and
# the resampling stability for 1,000 participants with the default sweep and Infomap, measured
# per draw and projected to 200 null cohorts plus 100 subsamples.
# Usage: bash benches/validation.sh [NULLS SUBSAMPLES [PARTICIPANTS [TRIALS]]]
#        (defaults 20 10 1000 and strata's default trials per density)
set -euo pipefail
cd "$(dirname "$0")/.."
cargo bench --quiet --bench validation -- "${1:-20}" "${2:-10}" "${3:-1000}" ${4:+"$4"}
