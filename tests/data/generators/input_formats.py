"""Inputs in the other formats strata reads, written by the formats' reference libraries, with the
values those libraries read back.

Writes tests/data/formats/* and tests/data/formats_reference.json:
- merged_4d.nii.gz: one 4 x 5 x 3 float32 volume per participant along the 4th dimension
  (nibabel), with participants.tsv naming the five participants in volume order.
- counts_stack.npy: five symmetric 6 x 6 streamline-count matrices (numpy), with the upper
  triangles as they are and after numpy's log1p.

Run: python3 tests/data/generators/input_formats.py
"""
import gzip
import json
import pathlib

import nibabel as nib
import numpy as np

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
    (DATA / "formats_reference.json").write_text(json.dumps(reference) + "\n")


if __name__ == "__main__":
    main()
