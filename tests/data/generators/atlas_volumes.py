"""Label volumes and the MNI152 2 mm brain mask for atlases/, with their reference values in
tests/data/atlas_volumes_reference.json.

Writes (numpy + nibabel, deterministic; gzip written here with mtime 0 and level 9 so the
bytes are the same on every run):
- atlases/dosenbach160/dosenbach160_labels_2mm.nii.gz and
  atlases/seitzman300/seitzman300_labels_2mm.nii.gz: int16 label volumes (value = region index,
  0 elsewhere) on the 91 x 109 x 91 MNI152 2 mm grid (affine GRID_AFFINE below). Each region is
  the set of voxels whose centre lies within its sphere (distance <= radius) around the published
  centre: 5 mm for Dosenbach 160, the source's per-region `radius(mm)` column for Seitzman 300.
  A voxel inside several spheres goes to the nearest centre (tie: the lower index). Spheres are
  not cut by the brain mask.
- atlases/mni152/mni152_brainmask_2mm.nii.gz: uint8 0/1, nilearn's
  `load_mni152_brain_mask(resolution=2)` (the ICBM 2009a symmetric T1 template shipped in
  nilearn, resampled by nilearn to 2 mm and thresholded at 0.2) carried onto the grid above. The
  two grids differ only by a flip of the first axis and a whole-voxel shift, so this is a pure
  re-indexing (no interpolation); the generator asserts that, and that no mask voxel is lost.

The centres are read from nilearn's package data (the same files as atlases.py), so this script
does not depend on atlases.py having run first.

Run: python3 tests/data/generators/atlas_volumes.py
"""
import csv
import gzip
import hashlib
import json
import pathlib

import nibabel
import nilearn
import numpy as np
from nilearn import datasets

ROOT = pathlib.Path(__file__).resolve().parents[3]
DATA = pathlib.Path(nilearn.__file__).resolve().parent / "datasets" / "data"

# The FSL MNI152 2 mm grid (91 x 109 x 91, LAS voxel order), the usual grid of 2 mm maps.
GRID_SHAPE = (91, 109, 91)
GRID_AFFINE = np.array(
    [[-2.0, 0.0, 0.0, 90.0], [0.0, 2.0, 0.0, -126.0], [0.0, 0.0, 2.0, -72.0], [0.0, 0.0, 0.0, 1.0]]
)
# Dosenbach et al. 2010 used 10 mm diameter spheres (from memory); the source table has no radius.
DOSENBACH_RADIUS_MM = 5.0
NIFTI_INTENT_LABEL = 1002  # nifti1.h
XFORM_MNI152 = 4  # nifti1.h


def sha256_bytes(data):
    return hashlib.sha256(data).hexdigest()


def voxel_centres():
    """World coordinates (mm) of every voxel centre, arrays of GRID_SHAPE."""
    i, j, k = np.meshgrid(*(np.arange(n, dtype=np.float64) for n in GRID_SHAPE), indexing="ij")
    x = GRID_AFFINE[0, 0] * i + GRID_AFFINE[0, 3]
    y = GRID_AFFINE[1, 1] * j + GRID_AFFINE[1, 3]
    z = GRID_AFFINE[2, 2] * k + GRID_AFFINE[2, 3]
    return x, y, z


def sphere_labels(centres, radii):
    """Label of each voxel: the nearest centre whose sphere holds the voxel centre, lower index
    on ties; squared distance (x - cx)^2 + (y - cy)^2 + (z - cz)^2 in float64, in that order."""
    x, y, z = voxel_centres()
    labels = np.zeros(GRID_SHAPE, dtype=np.int16)
    best = np.full(GRID_SHAPE, np.inf)
    for index, ((cx, cy, cz), radius) in enumerate(zip(centres, radii), start=1):
        d2 = (x - cx) * (x - cx) + (y - cy) * (y - cy) + (z - cz) * (z - cz)
        take = (d2 <= radius * radius) & (d2 < best)
        labels[take] = index
        best[take] = d2[take]
    return labels


def write_nifti_gz(path, data, descrip, intent_code=0):
    image = nibabel.Nifti1Image(data, GRID_AFFINE)
    header = image.header
    header.set_data_dtype(data.dtype)
    header.set_xyzt_units("mm")
    header.set_sform(GRID_AFFINE, code=XFORM_MNI152)
    header.set_qform(GRID_AFFINE, code=XFORM_MNI152)
    header["intent_code"] = intent_code
    header["descrip"] = descrip.encode()
    header["scl_slope"] = 1.0
    header["scl_inter"] = 0.0
    raw = image.to_bytes()
    path.parent.mkdir(parents=True, exist_ok=True)
    path.write_bytes(gzip.compress(raw, compresslevel=9, mtime=0))
    check = nibabel.load(path)
    assert np.array_equal(np.asarray(check.dataobj), data), path
    assert np.allclose(check.affine, GRID_AFFINE), path
    return raw


def label_record(name, source_files, centres, radii, labels):
    counts = np.bincount(labels.ravel(), minlength=len(centres) + 1)[1:]
    record = {
        "source": f"nilearn {nilearn.__version__} " + " and ".join(f"datasets/data/{f.name}" for f in source_files),
        "source_sha256": {f.name: sha256_bytes(f.read_bytes()) for f in source_files},
        "regions": len(centres),
        "radii_mm": sorted({float(r) for r in radii}),
        "voxel_counts": [int(c) for c in counts],
        "labelled_voxels": int((labels > 0).sum()),
        "missing_regions": [int(i + 1) for i in np.flatnonzero(counts == 0)],
        "voxel_count_min": int(counts.min()),
        "voxel_count_median": float(np.median(counts)),
        "voxel_count_max": int(counts.max()),
        # A few voxels with their labels (i, j, k, label): the centre voxel of every tenth region.
        "probes": [],
    }
    inverse = np.linalg.inv(GRID_AFFINE)
    for index in range(1, len(centres) + 1, 10):
        ijk = np.rint(inverse @ np.append(centres[index - 1], 1.0))[:3].astype(int)
        record["probes"].append([int(ijk[0]), int(ijk[1]), int(ijk[2]), int(labels[tuple(ijk)])])
    return record


def write_sphere_atlas(reference, name, source, centres, radii, description):
    """Writes atlases/NAME/NAME_labels_2mm.nii.gz from sphere centres and radii (mm) and records
    it in `reference` under NAME."""
    labels = sphere_labels(centres, radii)
    path = ROOT / "atlases" / name / f"{name}_labels_2mm.nii.gz"
    raw = write_nifti_gz(path, labels, f"{description}, MNI152 2 mm", NIFTI_INTENT_LABEL)
    record = label_record(name, [source], centres, radii, labels)
    record["sha256_uncompressed"] = sha256_bytes(raw)
    reference[name] = record


def dosenbach(reference):
    source = DATA / "dosenbach_2010.csv"
    with source.open() as f:
        rows = list(csv.DictReader(f))
    centres = np.array([[float(r["x"]), float(r["y"]), float(r["z"])] for r in rows])
    radii = [DOSENBACH_RADIUS_MM] * len(rows)
    write_sphere_atlas(reference, "dosenbach160", source, centres, radii, "Dosenbach 160, 5 mm spheres")


def seitzman(reference):
    source = DATA / "seitzman_2018_ROIs_300inVol_MNI_allInfo.txt"
    with source.open() as f:
        header = f.readline().split()
        rows = [dict(zip(header, line.split())) for line in f if line.strip()]
    centres = np.array([[float(r["x"]), float(r["y"]), float(r["z"])] for r in rows])
    radii = [float(r["radius(mm)"]) for r in rows]
    write_sphere_atlas(reference, "seitzman300", source, centres, radii, "Seitzman 300, source radii")


def mni152_mask(reference):
    mask = datasets.load_mni152_brain_mask(resolution=2)
    data = np.asarray(mask.dataobj)
    # Voxel (i, j, k) of the target grid is voxel inverse(A_mask) @ A_grid @ (i, j, k) of nilearn's.
    transform = np.linalg.inv(mask.affine) @ GRID_AFFINE
    linear = transform[:3, :3]
    offset = transform[:3, 3]
    assert np.array_equal(np.abs(linear), np.eye(3)), "grids differ by more than flips"
    assert np.array_equal(offset, np.rint(offset)), "grids differ by a fraction of a voxel"
    ii, jj, kk = np.meshgrid(*(np.arange(n) for n in GRID_SHAPE), indexing="ij")
    source_index = [
        (linear[axis, 0] * ii + linear[axis, 1] * jj + linear[axis, 2] * kk + offset[axis]).astype(int)
        for axis in range(3)
    ]
    for axis in range(3):
        assert source_index[axis].min() >= 0 and source_index[axis].max() < data.shape[axis]
    out = (data[tuple(source_index)] > 0).astype(np.uint8)
    nilearn_count = int((data > 0).sum())
    assert int(out.sum()) == nilearn_count, "mask voxels fall outside the 91 x 109 x 91 grid"
    path = ROOT / "atlases" / "mni152" / "mni152_brainmask_2mm.nii.gz"
    raw = write_nifti_gz(path, out, "MNI152 ICBM2009a sym brain mask 2mm")
    template = DATA / "mni_icbm152_t1_tal_nlin_sym_09a_converted.nii.gz"
    reference["mni152_brainmask_2mm"] = {
        "source": f"nilearn {nilearn.__version__} datasets.load_mni152_brain_mask(resolution=2) "
        f"from datasets/data/{template.name}",
        "source_sha256": {template.name: sha256_bytes(template.read_bytes())},
        "nilearn_shape": [int(n) for n in data.shape],
        "nilearn_affine": mask.affine.tolist(),
        "nilearn_voxel_count": nilearn_count,
        "voxel_count": int(out.sum()),
        "sha256_uncompressed": sha256_bytes(raw),
    }


def main():
    reference = {"grid_shape": list(GRID_SHAPE), "grid_affine": GRID_AFFINE.tolist()}
    dosenbach(reference)
    seitzman(reference)
    mni152_mask(reference)
    path = ROOT / "tests" / "data" / "atlas_volumes_reference.json"
    path.write_text(json.dumps(reference, indent=1) + "\n")


if __name__ == "__main__":
    main()
