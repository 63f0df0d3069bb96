#!/usr/bin/env bash
# Prints the community-detection figures recorded in docs/performance.md: median seconds of one
# trial per method on participant graphs of 1,000 and 5,000 nodes at densities 5% and 20%, for
# strata and for the reference packages (infomap, leidenalg, igraph) on the same graphs in the
# same run, then the whole default sweep plus consensus for 1,000 participants.
# Needs python3 with the packages of tests/data/generators/requirements.txt.
# Usage: bash benches/communities.sh [WORKDIR]
set -euo pipefail
cd "$(dirname "$0")/.."
work="${1:-/tmp/strata-bench-communities}"
mkdir -p "$work"
cargo bench --quiet --bench communities -- trials "$work"
python3 benches/communities.py "$work"
cargo bench --quiet --bench communities -- sweep
