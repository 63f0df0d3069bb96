"""Small 4D BOLD series, confounds and seeds, with the seed maps and region matrices numpy gives.

Writes tests/data/bold/ (series written by nibabel, confounds and censoring tables, a seed mask
and an atlas label volume) and tests/data/bold_reference.json: for each case the expected
values, computed as np.corrcoef of the residuals of np.linalg.lstsq on [confounds, intercept]
over the kept frames; and sphere voxel sets from nibabel's affine (nibabel.affines.apply_affine).
Run: python3 tests/data/generators/bold_reference.py
"""
import gzip
import json
import pathlib

import nibabel as nib
import numpy as np
from nibabel.affines import apply_affine

DATA = pathlib.Path(__file__).resolve().parents[1]
OUT = DATA / "bold"
SHAPE = (6, 7, 5)
FRAMES = 40


def save(image, name):
    path = OUT / name
    raw = image.to_bytes()
    if name.endswith(".gz"):
        # mtime 0 keeps the bytes identical from run to run.
        path.write_bytes(gzip.compress(raw, mtime=0))
    else:
        path.write_bytes(raw)
    return path


def write_tsv(path, columns, rows):
    lines = ["\t".join(columns)]
    for row in rows:
        lines.append("\t".join(cell if isinstance(cell, str) else repr(float(cell)) for cell in row))
    path.write_text("\n".join(lines) + "\n")


def series(rng, confounds, scale):
    """A 4D series: two latent signals, confound contamination, noise; x = 0 plane empty."""
    latent = rng.normal(size=(FRAMES, 2))
    voxels = int(np.prod(SHAPE))
    loadings = rng.normal(size=(2, voxels))
    contamination = rng.normal(scale=0.5, size=(confounds.shape[1], voxels))
    values = scale + 5.0 * (latent @ loadings + confounds @ contamination + rng.normal(size=(FRAMES, voxels)))
    volume = values.T.reshape(SHAPE + (FRAMES,), order="F")
    volume[0] = 0.0
    return volume


def fill_leading(column):
    """Leading n/a take the mean of the column's numeric rows (strata's rule)."""
    column = np.array(column, dtype=np.float64)
    column[np.isnan(column)] = np.nanmean(column)
    return column


def residuals(y, design):
    beta, *_ = np.linalg.lstsq(design, y, rcond=None)
    return y - design @ beta


def seed_map(data, kept, confounds, seed):
    """numpy: r of the residual seed mean series with every voxel's residual series."""
    y = data.reshape(-1, FRAMES, order="F").T[kept]
    design = np.column_stack([confounds[kept], np.ones(kept.sum())]) if confounds is not None else np.ones((kept.sum(), 1))
    seed_series = y[:, seed].mean(axis=1)
    resid = residuals(np.column_stack([seed_series, y]), design)
    constant = np.all(y == y[0], axis=0)
    with np.errstate(invalid="ignore", divide="ignore"):
        r = np.corrcoef(resid.T)[0, 1:]
    r[constant] = 0.0
    return r


def region_matrix(data, kept, confounds, labels):
    y = data.reshape(-1, FRAMES, order="F").T[kept]
    flat = labels.ravel(order="F")
    present = sorted(int(v) for v in np.unique(flat) if v != 0)
    means = np.column_stack([y[:, flat == label].mean(axis=1) for label in present])
    design = np.column_stack([confounds[kept], np.ones(kept.sum())]) if confounds is not None else np.ones((kept.sum(), 1))
    return np.corrcoef(residuals(means, design).T), present


def main():
    OUT.mkdir(exist_ok=True)
    rng = np.random.default_rng(7)
    affine = np.array([[-3.0, 0, 0, 9], [0, 3, 0, -12], [0, 0, 3, -6], [0, 0, 0, 1]])

    # Confounds: motion-like columns, a derivative with a leading n/a, a text column, and a
    # censoring column (1 keep, 0 drop) that drops the first frame among others.
    trans_x = np.cumsum(rng.normal(scale=0.1, size=FRAMES))
    rot_y = np.cumsum(rng.normal(scale=0.02, size=FRAMES))
    derivative = np.concatenate([[np.nan], np.diff(trans_x)])
    keep = np.ones(FRAMES, dtype=int)
    keep[[0, 7, 8, 21, 33]] = 0
    kept = keep == 1
    quality = ["good" if k else "bad" for k in keep]
    confound_matrix = np.column_stack([trans_x, rot_y, fill_leading(derivative)])

    participants = {}
    for participant, scale, name, dtype in [
        ("sub-01", 1000.0, "sub-01_task-rest_bold.nii.gz", np.float32),
        ("sub-02", 600.0, "sub-02_task-rest_bold.nii", np.int16),
    ]:
        volume = series(rng, confound_matrix, scale)
        if dtype == np.int16:
            image = nib.Nifti1Image(volume.astype(np.float64), affine)
            image.header.set_data_dtype(np.int16)
            image.header.set_slope_inter(0.05, 100.0)
        else:
            image = nib.Nifti1Image(volume.astype(np.float32), affine)
        image.header.set_sform(affine, code=4)
        image.header.set_qform(affine, code=4)
        path = save(image, name)
        if participant == "sub-01":
            # The same series as a single-file NIfTI-2 image (540-byte header).
            (OUT / "nifti2").mkdir(exist_ok=True)
            save(nib.Nifti2Image(volume.astype(np.float32), image.affine, header=nib.Nifti2Header()), "nifti2/sub-01_task-rest_bold.nii")
        back = nib.load(path)
        participants[participant] = {"file": name, "data": np.asarray(back.get_fdata(), dtype=np.float64), "affine": back.affine}
        rows = [
            [trans_x[t], rot_y[t], "n/a" if np.isnan(derivative[t]) else derivative[t], quality[t], str(keep[t])]
            for t in range(FRAMES)
        ]
        write_tsv(OUT / f"{participant}_task-rest_confounds.tsv", ["trans_x", "rot_y", "trans_x_derivative1", "quality", "keep"], rows)
        write_tsv(OUT / f"{participant}_task-rest_censor.tsv", ["keep"], [[str(k)] for k in keep])

    # A seed mask (four voxels) and an atlas label volume with non-consecutive labels.
    mask = np.zeros(SHAPE, dtype=np.uint8)
    mask[2:4, 3, 2] = 1
    mask[3, 4, 2:4] = 1
    image = nib.Nifti1Image(mask, affine)
    image.header.set_sform(affine, code=4)
    save(image, "seed_mask.nii.gz")
    labels = np.zeros(SHAPE, dtype=np.int16)
    labels[1:3, :4, :] = 2
    labels[3:, :4, :] = 5
    labels[1:4, 4:, :3] = 9
    labels[4:, 4:, :3] = 11
    labels[1:, 4:, 3:] = 14
    image = nib.Nifti1Image(labels, affine)
    image.header.set_sform(affine, code=4)
    save(image, "atlas_labels.nii.gz")
    mask_voxels = np.flatnonzero(mask.ravel(order="F"))
    label_voxels = np.flatnonzero(labels.ravel(order="F") == 9)

    bold_affine = participants["sub-01"]["affine"]
    centre, radius = [-0.5, 0.5, 1.0], 4.5
    ijk = np.indices(SHAPE).reshape(3, -1, order="F").T
    sphere = np.flatnonzero(np.sum((apply_affine(bold_affine, ijk) - centre) ** 2, axis=1) <= radius**2)

    every_column = np.column_stack([trans_x, rot_y, fill_leading(derivative)])
    two_columns = np.column_stack([trans_x, fill_leading(derivative)])
    all_kept = np.ones(FRAMES, dtype=bool)
    cases = [
        # name, flags, confounds used, kept frames, kind, seed voxels, statistic
        ("mask_plain", ["--seed-mask", "bold/seed_mask.nii.gz"], None, all_kept, "map", mask_voxels, "r"),
        ("mask_confounds_censor", ["--seed-mask", "bold/seed_mask.nii.gz", "--confounds", "CONFOUNDS", "--censor-column", "keep"],
         every_column, kept, "map", mask_voxels, "r"),
        ("sphere_columns_censor_z", ["--seed-sphere", ",".join(str(c) for c in centre), "--radius", str(radius),
                                     "--confounds", "CONFOUNDS", "--confound-columns", "trans_x,trans_x_derivative1",
                                     "--censor-column", "keep", "--statistic", "z"],
         two_columns, kept, "map", sphere, "z"),
        ("label_confounds", ["--seed-label", "9", "--atlas-volume", "bold/atlas_labels.nii.gz", "--confounds", "CONFOUNDS",
                             "--confound-columns", "trans_x,rot_y,trans_x_derivative1"],
         every_column, all_kept, "map", label_voxels, "r"),
        ("label_censor_only", ["--seed-label", "9", "--atlas-volume", "bold/atlas_labels.nii.gz", "--censor", "CENSOR",
                               "--censor-column", "keep"],
         None, kept, "map", label_voxels, "r"),
        ("regions_plain", ["--atlas-volume", "bold/atlas_labels.nii.gz"], None, all_kept, "matrix", None, "r"),
        ("regions_confounds_censor_z", ["--atlas-volume", "bold/atlas_labels.nii.gz", "--confounds", "CONFOUNDS",
                                        "--censor-column", "keep", "--statistic", "z"],
         every_column, kept, "matrix", None, "z"),
    ]
    reference = {
        "source": f"numpy {np.__version__} lstsq residuals and corrcoef; nibabel {nib.__version__} get_fdata and apply_affine",
        "frames": FRAMES,
        "participants": {p: v["file"] for p, v in participants.items()},
        "cases": [],
    }
    for name, flags, confounds, kept_frames, kind, seed, statistic in cases:
        expected = {}
        for participant, entry in participants.items():
            if kind == "map":
                r = seed_map(entry["data"], kept_frames, confounds, seed)
            else:
                r, present = region_matrix(entry["data"], kept_frames, confounds, labels)
            if statistic == "z":
                r = np.arctanh(np.clip(r, -1 + 1e-7, 1 - 1e-7))
                if kind == "matrix":
                    np.fill_diagonal(r, 0.0)
            expected[participant] = [float(v) for v in np.asarray(r).ravel()]
        case = {
            "name": name,
            "flags": flags,
            "kind": kind,
            "statistic": statistic,
            "frames_kept": int(kept_frames.sum()),
            "regressors": 1 + (0 if confounds is None else confounds.shape[1]),
            "expected": expected,
        }
        if seed is not None:
            case["seed_voxels"] = int(len(seed))
        if kind == "matrix":
            case["labels"] = present
        reference["cases"].append(case)

    # Sphere voxel sets from nibabel's affine: the series' own, and an oblique one.
    oblique = np.array([[2.5, 0.3, 0.0, -7.1], [0.2, -2.5, 0.1, 10.3], [0.0, 0.1, 3.2, -4.7], [0, 0, 0, 1]])
    spheres = []
    for grid_affine, sphere_centre, sphere_radius in [
        (bold_affine, centre, radius),
        (oblique, [-1.3, 2.2, 3.9], 5.25),
        (oblique, [4.0, -3.0, 6.5], 3.0),
    ]:
        points = apply_affine(grid_affine, ijk)
        inside = np.flatnonzero(np.sum((points - sphere_centre) ** 2, axis=1) <= sphere_radius**2)
        spheres.append({
            "dim": list(SHAPE),
            "affine": np.asarray(grid_affine, dtype=np.float64).tolist(),
            "centre": sphere_centre,
            "radius": sphere_radius,
            "voxels": [int(v) for v in inside],
        })
    reference["spheres"] = spheres
    (DATA / "bold_reference.json").write_text(json.dumps(reference) + "\n")


if __name__ == "__main__":
    main()
