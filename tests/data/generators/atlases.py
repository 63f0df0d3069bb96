"""Coordinate atlases for atlases/, taken from the package data of nilearn (PyPI, BSD-3-Clause),
with the source values and each source file's sha256 in tests/data/atlases_reference.json.

Writes:
- atlases/dosenbach160/dosenbach160_regions.tsv: nilearn's dosenbach_2010.csv (160 ROIs,
  Dosenbach et al. 2010), as index, name, network, x, y, z (mm, as published);
- atlases/seitzman300/seitzman300_regions.tsv: nilearn's seitzman_2018_ROIs_300inVol_MNI_allInfo.txt
  and seitzman_2018_ROIs_anatomicalLabels.txt (300 ROIs, Seitzman et al. 2020), as index, name
  (anatomical class and index), network, x, y, z, radius_mm.

Run: python3 tests/data/generators/atlases.py
"""
import csv
import hashlib
import json
import pathlib

import nilearn

ROOT = pathlib.Path(__file__).resolve().parents[3]
DATA = pathlib.Path(nilearn.__file__).resolve().parent / "datasets" / "data"


def sha256(path):
    return hashlib.sha256(path.read_bytes()).hexdigest()


def write_tsv(path, header, rows):
    path.parent.mkdir(parents=True, exist_ok=True)
    lines = ["\t".join(header)] + ["\t".join(str(cell) for cell in row) for row in rows]
    path.write_text("\n".join(lines) + "\n")


def dosenbach(reference):
    source = DATA / "dosenbach_2010.csv"
    with source.open() as f:
        rows = list(csv.DictReader(f))
    out = [[int(r["number"]), r["name"], r["network"], r["x"], r["y"], r["z"]] for r in rows]
    write_tsv(ROOT / "atlases" / "dosenbach160" / "dosenbach160_regions.tsv", ["index", "name", "network", "x", "y", "z"], out)
    reference["dosenbach160"] = {
        "source": f"nilearn {nilearn.__version__} datasets/data/dosenbach_2010.csv",
        "sha256": sha256(source),
        "rows": len(rows),
        "networks": sorted({r["network"] for r in rows}),
        "coordinates": [[float(r["x"]), float(r["y"]), float(r["z"])] for r in rows],
        "names": [r["name"] for r in rows],
    }


def seitzman(reference):
    source = DATA / "seitzman_2018_ROIs_300inVol_MNI_allInfo.txt"
    labels = DATA / "seitzman_2018_ROIs_anatomicalLabels.txt"
    with source.open() as f:
        header = f.readline().split()
        rows = [dict(zip(header, line.split())) for line in f if line.strip()]
    with labels.open() as f:
        mapping = dict(part.split("=") for part in f.readline().strip().split(","))
        classes = [mapping[line.strip()] for line in f if line.strip()]
    counts = {}
    out = []
    for index, (row, anatomical) in enumerate(zip(rows, classes), start=1):
        counts[anatomical] = counts.get(anatomical, 0) + 1
        name = f"{anatomical}-{counts[anatomical]:03d}"
        out.append([index, name, row["netName"], row["x"], row["y"], row["z"], row["radius(mm)"]])
    write_tsv(
        ROOT / "atlases" / "seitzman300" / "seitzman300_regions.tsv",
        ["index", "name", "network", "x", "y", "z", "radius_mm"],
        out,
    )
    reference["seitzman300"] = {
        "source": f"nilearn {nilearn.__version__} datasets/data/seitzman_2018_ROIs_300inVol_MNI_allInfo.txt and seitzman_2018_ROIs_anatomicalLabels.txt",
        "sha256": sha256(source),
        "sha256_labels": sha256(labels),
        "rows": len(rows),
        "networks": sorted({r["netName"] for r in rows}),
        "coordinates": [[float(r["x"]), float(r["y"]), float(r["z"])] for r in rows],
        "anatomical_classes": classes,
    }


def main():
    reference = {}
    dosenbach(reference)
    seitzman(reference)
    (ROOT / "tests" / "data" / "atlases_reference.json").write_text(json.dumps(reference) + "\n")


if __name__ == "__main__":
    main()
