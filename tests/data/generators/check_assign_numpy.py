#!/usr/bin/env python3
"""Recompute `strata assign` placements with numpy from the run's saved centroids.

Usage: check_assign_numpy.py RUN_DIR ASSIGNMENTS.tsv MATRIX.npy [MATRIX.npy ...]
For each new participant's R x R correlation matrix: the upper triangle without the diagonal
(numpy.triu_indices(R, 1), strata's feature order), Fisher z = arctanh of r clipped at
1 - 1e-7 (strata's documented clip), Pearson r with every row of RUN_DIR/assignment/centroids.npy
(numpy.corrcoef), and the nearest community (largest r; model.json lists community numbers in
centroid order). Compares with the r_community_K and nearest columns of ASSIGNMENTS.tsv
(tolerance 2e-6: the table keeps 6 decimals). Exits 1 listing every mismatch.
Run by tests/cli_assign.rs (numpy must be importable).
"""
import csv
import json
import pathlib
import re
import sys

import numpy as np

CLIP = 1e-7


def main():
    run, table_path, files = pathlib.Path(sys.argv[1]), sys.argv[2], sys.argv[3:]
    centroids = np.load(run / "assignment" / "centroids.npy").astype(np.float64)
    model = json.loads((run / "assignment" / "model.json").read_text())
    communities = [community for community, _ in model["communities"]]
    with open(table_path, newline="") as handle:
        rows = {row["participant_id"]: row for row in csv.DictReader(handle, delimiter="\t")}
    problems = []
    for path in files:
        label = "sub-" + re.search(r"sub-([0-9A-Za-z+]+)", pathlib.Path(path).name).group(1)
        matrix = np.load(path).astype(np.float64)
        upper = matrix[np.triu_indices(matrix.shape[0], 1)]
        z = np.arctanh(np.clip(upper, -1 + CLIP, 1 - CLIP))
        # strata stores features in float32 before correlating.
        z = z.astype(np.float32).astype(np.float64)
        r = np.array([np.corrcoef(z, centroid)[0, 1] for centroid in centroids])
        nearest = communities[int(np.argmax(r))]
        row = rows.get(label)
        if row is None:
            problems.append(f"{label}: not in {table_path}")
            continue
        if int(row["nearest"]) != nearest:
            problems.append(f"{label}: nearest {row['nearest']} but numpy gives {nearest} (r = {r})")
        for community, value in zip(communities, r):
            found = float(row[f"r_community_{community}"])
            if abs(found - value) > 2e-6:
                problems.append(f"{label}: r_community_{community} {found} but numpy gives {value:.8f}")
    for problem in problems:
        print(problem)
    print(f"checked {len(files)} participants against numpy {np.__version__}: {len(problems)} mismatch(es)")
    sys.exit(1 if problems else 0)


if __name__ == "__main__":
    main()
