"""Inputs in the other formats strata reads, written by the formats' reference libraries, with the
values those libraries read back.

Writes tests/data/formats/* and tests/data/formats_reference.json:
- merged_4d.nii.gz: one 4 x 5 x 3 float32 volume per participant along the 4th dimension
  (nibabel), with participants.tsv naming the five participants in volume order.
- mat/*.mat: MATLAB level-5 files written by scipy.io.savemat, compressed and not: a 3 x 4
  float64 matrix with an int16 matrix, a char array and a cell array beside it; a 6 x 6 x 5
  (R x R x N, MATLAB's layout) and a 5 x 6 x 6 (N x R x R) stack of correlation matrices; one
  6 x 6 matrix per participant; a 4D variable and a matrix with a NaN; with the values
  scipy.io.loadmat reads back.
- h5/*: HDF5 written by h5py (chunked, gzip, shuffle): a 5 x 6 x 6 stack of correlation matrices
  in a group, a float32 and an int16 matrix and a string dataset; and a MATLAB v7.3-style file
  (HDF5 behind a 512-byte user block with MATLAB's header, MATLAB_class attributes, dimensions
  reversed as MATLAB writes them), with the values h5py reads back.
- cifti/*.pconn.nii: CIFTI-2 parcellated connectivity written by nibabel (NIfTI-2 header plus
  the CIFTI XML extension): one symmetric 6 x 6 matrix per participant over six named parcels
  (names with XML special characters), a 4 x 4 matrix that is not symmetric (storage order),
  and a file whose parcels are named differently; with nibabel's matrix and parcel names.
- measures/participants.tsv and measures/scores.tsv: a participants table with score columns
  and a separate scores table (one missing value, one text column), with scipy.stats.zscore
  (ddof=1) of the complete participants' scores.
- counts_stack.npy: five symmetric 6 x 6 streamline-count matrices (numpy), with the upper
  triangles as they are and after numpy's log1p.

Run: python3 tests/data/generators/input_formats.py
"""
import gzip
import json
import pathlib

import nibabel as nib
import numpy as np
import h5py
import scipy
import scipy.io
import scipy.stats

DATA = pathlib.Path(__file__).resolve().parents[1]
OUT = DATA / "formats"
PARTICIPANTS = ["sub-01", "sub-02", "sub-03", "sub-04", "sub-05"]


def merged_nifti(rng, reference):
    """Participants along the 4th dimension, in participants-table order."""
    affine = np.array([[-4.0, 0, 0, 90], [0, 4, 0, -126], [0, 0, 4, -72], [0, 0, 0, 1]])
    shape = (4, 5, 3, len(PARTICIPANTS))
    r = np.clip(rng.normal(0.2, 0.3, size=shape), -0.95, 0.95).astype(np.float32)
    image = nib.Nifti1Image(r, affine)
    image.header.set_sform(affine, code=4)
    image.header.set_qform(affine, code=4)
    # mtime 0 keeps the bytes identical from run to run.
    (OUT / "merged_4d.nii.gz").write_bytes(gzip.compress(image.to_bytes(), mtime=0))
    back = nib.load(OUT / "merged_4d.nii.gz")
    data = np.asarray(back.get_fdata(), dtype=np.float64)
    reference["merged_4d"] = {
        "file": "formats/merged_4d.nii.gz",
        "shape": list(back.shape),
        "affine": back.affine.tolist(),
        # One list per participant, voxels in Fortran (file) order as strata stores them.
        "volumes": [[float(v) for v in data[..., t].ravel(order="F")] for t in range(shape[3])],
    }


def counts(rng, reference):
    """Structural counts: heavy-tailed, zeros included, not correlations."""
    regions = 6
    stack = np.zeros((len(PARTICIPANTS), regions, regions))
    for t in range(len(PARTICIPANTS)):
        upper = np.triu(np.floor(rng.lognormal(3.0, 1.5, size=(regions, regions))), 1)
        upper[0, 5] = 0.0
        stack[t] = upper + upper.T
    np.save(OUT / "counts_stack.npy", stack)
    rows, cols = np.triu_indices(regions, 1)
    reference["counts"] = {
        "file": "formats/counts_stack.npy",
        "raw": [[float(v) for v in m[rows, cols]] for m in stack],
        "log1p": [[float(v) for v in np.log1p(m[rows, cols])] for m in stack],
    }


def correlation_matrix(rng, regions):
    """A symmetric correlation matrix with unit diagonal (from random time series)."""
    series = rng.normal(size=(40, regions))
    series[:, 1] += 0.8 * series[:, 0]
    return np.corrcoef(series, rowvar=False)


def savemat(name, variables, compress):
    path = OUT / "mat" / name
    scipy.io.savemat(path, variables, do_compression=compress, oned_as="column")
    # savemat writes the creation time into the 116-byte header text: blank it so the bytes are
    # identical from run to run (the text is free-form, MAT-File Format).
    raw = bytearray(path.read_bytes())
    text = b"MATLAB 5.0 MAT-file, written by strata's test generator (scipy.io.savemat)"
    raw[:116] = text.ljust(116, b" ")
    path.write_bytes(bytes(raw))
    return path


def mat_files(rng, reference):
    (OUT / "mat").mkdir(exist_ok=True)
    cases = {}
    plain = np.arange(12, dtype=np.float64).reshape(3, 4) / 8.0 - 0.7
    counts = rng.integers(-300, 300, size=(3, 4)).astype(np.int16)
    names = np.empty((3,), dtype=object)
    names[:] = ["left", "right", "middle"]
    for compress in (False, True):
        name = f"matrix_{'compressed' if compress else 'plain'}.mat"
        path = savemat(name, {"atlas": "northfield", "conn": plain, "counts": counts, "names": names}, compress)
        back = scipy.io.loadmat(path)
        cases[name] = {
            "conn": back["conn"].tolist(),
            "counts": back["counts"].astype(np.float64).tolist(),
        }
    stack = np.stack([correlation_matrix(rng, 6) for _ in PARTICIPANTS], axis=2)
    path = savemat("stack_rrn.mat", {"conn": stack}, True)
    back = scipy.io.loadmat(path)["conn"]
    cases["stack_rrn.mat"] = {"conn": [back[:, :, k].tolist() for k in range(back.shape[2])]}
    path = savemat("stack_nrr.mat", {"conn": np.ascontiguousarray(np.moveaxis(stack, 2, 0)).astype(np.float32)}, False)
    back = scipy.io.loadmat(path)["conn"]
    cases["stack_nrr.mat"] = {"conn": [back[k].astype(np.float64).tolist() for k in range(back.shape[0])]}
    for index, participant in enumerate(PARTICIPANTS):
        name = f"{participant}_conn.mat"
        matrix = correlation_matrix(rng, 6)
        path = savemat(name, {"conn": matrix, "motion": np.array([[0.1 * index]])}, index % 2 == 0)
        cases[name] = {"conn": scipy.io.loadmat(path)["conn"].tolist()}
    savemat("four_dims.mat", {"conn": np.zeros((2, 2, 2, 2))}, True)
    with_nan = correlation_matrix(rng, 6)
    with_nan[2, 4] = with_nan[4, 2] = np.nan
    savemat("with_nan.mat", {"conn": with_nan}, True)
    savemat("not_a_stack.mat", {"conn": np.zeros((3, 4, 5))}, False)
    reference["mat"] = {"source": f"scipy {scipy.__version__} io.savemat / io.loadmat", "files": cases}


def hdf5_files(rng, reference):
    (OUT / "h5").mkdir(exist_ok=True)
    cases = {}
    stack = np.stack([correlation_matrix(rng, 6) for _ in PARTICIPANTS])
    path = OUT / "h5" / "stack_chunked.h5"
    with h5py.File(path, "w", libver="earliest") as f:
        f.create_dataset("group/conn", data=stack, chunks=(2, 3, 3), compression="gzip", compression_opts=4, shuffle=True)
        f.create_dataset("plain", data=(np.arange(12).reshape(3, 4) / 10.0).astype(np.float32))
        f.create_dataset(
            "ints", data=rng.integers(-300, 300, size=(3, 4)).astype(np.int16), chunks=(2, 2), compression="gzip", shuffle=True
        )
        f.create_dataset("names", data=np.array([b"left", b"right", b"middle"]))
    with h5py.File(path, "r") as f:
        cases["stack_chunked.h5"] = {
            "group/conn": [m.tolist() for m in f["group/conn"][()]],
            "plain": f["plain"][()].astype(np.float64).tolist(),
            "ints": f["ints"][()].astype(np.float64).tolist(),
        }
    # MATLAB v7.3: HDF5 with a 512-byte user block that starts with MATLAB's 128-byte header; a
    # MATLAB array of size R x R x N is stored with the dimensions reversed (N, R, R).
    path = OUT / "h5" / "matlab_v73.mat"
    matlab_stack = np.stack([correlation_matrix(rng, 6) for _ in PARTICIPANTS], axis=2)  # R x R x N
    rect = np.arange(12, dtype=np.float64).reshape(3, 4) / 16.0  # MATLAB 3 x 4
    with h5py.File(path, "w", userblock_size=512, libver="earliest") as f:
        for name, array in [("conn", matlab_stack), ("rect", rect)]:
            stored = np.ascontiguousarray(array.transpose())
            d = f.create_dataset(name, data=stored, chunks=stored.shape, compression="gzip", shuffle=True)
            d.attrs["MATLAB_class"] = np.bytes_(b"double")
    header = b"MATLAB 7.3 MAT-file, written by strata's test generator (h5py). HDF5 schema 1.00 ."
    with open(path, "r+b") as f:
        f.write(header.ljust(116, b" ") + bytes(8) + b"\x00\x02" + b"IM")
    with h5py.File(path, "r") as f:
        back = f["conn"][()].transpose()
        cases["matlab_v73.mat"] = {
            "conn": [back[:, :, k].tolist() for k in range(back.shape[2])],
            "rect": f["rect"][()].transpose().tolist(),
        }
    reference["hdf5"] = {"source": f"h5py {h5py.__version__} (HDF5 {h5py.version.hdf5_version})", "files": cases}


PARCELS = ["Visual & Occipital", "Somatomotor", "Dorsal <Attention>", "Salience \"Ventral\"", "Limbic", "Default"]


def save_pconn(path, matrix, names):
    from nibabel.cifti2 import cifti2_axes

    count = len(names)
    parcels = cifti2_axes.ParcelsAxis(
        names,
        [np.array([[i, 0, 0]]) for i in range(count)],
        [{} for _ in range(count)],
        affine=np.eye(4),
        volume_shape=(count, 1, 1),
        nvertices={},
    )
    image = nib.Cifti2Image(matrix, header=(parcels, parcels))
    image.nifti_header.set_intent("ConnParcels")
    nib.save(image, path)
    back = nib.load(path)
    return {
        "matrix": np.asarray(back.get_fdata(), dtype=np.float64).tolist(),
        "names": [str(n) for n in back.header.get_axis(0).name],
    }


def cifti_files(rng, reference):
    (OUT / "cifti").mkdir(exist_ok=True)
    cases = {}
    for participant in PARTICIPANTS:
        name = f"{participant}_conn.pconn.nii"
        cases[name] = save_pconn(OUT / "cifti" / name, correlation_matrix(rng, 6).astype(np.float32), PARCELS)
    asymmetric = (np.arange(16, dtype=np.float32).reshape(4, 4) / 20.0).astype(np.float32)
    cases["asymmetric.pconn.nii"] = save_pconn(OUT / "cifti" / "asymmetric.pconn.nii", asymmetric, PARCELS[:4])
    renamed = PARCELS[:3] + ["Frontoparietal"] + PARCELS[4:]
    cases["renamed.pconn.nii"] = save_pconn(OUT / "cifti" / "renamed.pconn.nii", correlation_matrix(rng, 6).astype(np.float32), renamed)
    reference["cifti"] = {"source": f"nibabel {nib.__version__} cifti2", "files": cases}


def measure_tables(rng, reference):
    (OUT / "measures").mkdir(exist_ok=True)
    ids = [f"sub-{k:02d}" for k in range(1, 13)]
    scores = np.round(rng.normal([100, 50, 10], [15, 10, 3], size=(len(ids), 3)), 1)
    groups = ["insomnia" if k % 2 else "control" for k in range(len(ids))]
    lines = ["participant_id\tdiagnosis\tmemory\tattention\tsleep_hours"]
    for k, pid in enumerate(ids):
        cells = [f"{v:.1f}" for v in scores[k]]
        if k == 4:
            cells[1] = "n/a"
        lines.append("\t".join([pid, groups[k]] + cells))
    (OUT / "measures" / "participants.tsv").write_text("\n".join(lines) + "\n")
    # The separate table lists the participants in another order and has a text column.
    lines = ["participant_id\tmemory\tsite\tattention\tsleep_hours"]
    for k in reversed(range(len(ids))):
        cells = [f"{v:.1f}" for v in scores[k]]
        if k == 4:
            cells[1] = "n/a"
        lines.append("\t".join([ids[k], cells[0], "north" if k % 3 else "south", cells[1], cells[2]]))
    (OUT / "measures" / "scores.tsv").write_text("\n".join(lines) + "\n")
    complete = [k for k in range(len(ids)) if k != 4]
    z = scipy.stats.zscore(scores[complete], axis=0, ddof=1)
    reference["measures"] = {
        "source": f"scipy {scipy.__version__} stats.zscore(ddof=1)",
        "participants": [ids[k] for k in complete],
        "names": ["memory", "attention", "sleep_hours"],
        "zscores": z.tolist(),
        "missing": [[ids[4], "attention"]],
        # Welch t of insomnia minus control per measure (standardising does not change t).
        "welch_t": [
            float(scipy.stats.ttest_ind(
                scores[[k for k in complete if groups[k] == "insomnia"], m],
                scores[[k for k in complete if groups[k] == "control"], m],
                equal_var=False,
            ).statistic)
            for m in range(3)
        ],
    }


def main():
    OUT.mkdir(exist_ok=True)
    rng = np.random.default_rng(7)
    reference = {
        "source": f"nibabel {nib.__version__}, numpy {np.__version__}",
        "participants": PARTICIPANTS,
    }
    (OUT / "participants.tsv").write_text(
        "participant_id\tdiagnosis\n"
        + "".join(f"{p}\t{'insomnia' if i % 2 else 'control'}\n" for i, p in enumerate(PARTICIPANTS))
    )
    merged_nifti(rng, reference)
    counts(rng, reference)
    mat_files(rng, reference)
    hdf5_files(rng, reference)
    cifti_files(rng, reference)
    measure_tables(rng, reference)
    (DATA / "formats_reference.json").write_text(json.dumps(reference) + "\n")


if __name__ == "__main__":
    main()
