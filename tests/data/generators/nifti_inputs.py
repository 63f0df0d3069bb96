"""Small NIfTI-1 and NIfTI-2 inputs written by nibabel, with the values nibabel reads back
(get_fdata).

Writes tests/data/nifti/*.nii[.gz] and tests/data/nifti_reference.json.
Run: python3 tests/data/generators/nifti_inputs.py
"""
import gzip
import json
import pathlib

import nibabel as nib
import numpy as np

DATA = pathlib.Path(__file__).resolve().parents[1]
OUT = DATA / "nifti"


def save(image, name):
    path = OUT / name
    raw = image.to_bytes()
    if name.endswith(".gz"):
        # mtime 0 keeps the bytes identical from run to run.
        path.write_bytes(gzip.compress(raw, mtime=0))
    else:
        path.write_bytes(raw)
    return path


def main():
    OUT.mkdir(exist_ok=True)
    rng = np.random.default_rng(3)
    affine = np.array([[-4.0, 0, 0, 90], [0, 4, 0, -126], [0, 0, 4, -72], [0, 0, 0, 1]])
    cases = []
    shape = (4, 5, 3)
    r = np.clip(rng.normal(0.2, 0.3, size=shape), -0.95, 0.95).astype(np.float32)
    r[0, 0, 0] = 0.0
    image = nib.Nifti1Image(r, affine)
    image.header.set_sform(affine, code=4)
    image.header.set_qform(affine, code=4)
    cases.append(("float32.nii.gz", image))
    # int16 with scl_slope / scl_inter: nibabel applies y = slope * x + inter.
    stored = rng.integers(-3000, 3000, size=shape).astype(np.int16)
    image = nib.Nifti1Image(stored, affine)
    image.header.set_data_dtype(np.int16)
    image.header.set_slope_inter(2.5e-4, 0.01)
    image.header.set_sform(affine, code=4)
    cases.append(("int16_scaled.nii", image))
    # Big-endian float64 with only a qform.
    header = nib.Nifti1Header(endianness=">")
    header.set_data_dtype(">f8")
    image = nib.Nifti1Image(r.astype(">f8"), affine, header=header)
    image.header.set_qform(affine, code=1)
    image.header.set_sform(None, code=0)
    cases.append(("float64_bigendian.nii", image))
    # NIfTI-2 (540-byte header, 64-bit dims, float64 geometry): float32 with an oblique sform
    # whose entries are not exact in float32, and big-endian int16 with scaling and a qform only.
    # The draws come after the NIfTI-1 cases so those files stay as they were.
    shape2 = (5, 4, 3)
    r2 = np.clip(rng.normal(0.1, 0.3, size=shape2), -0.95, 0.95).astype(np.float32)
    angle = 0.1
    oblique = np.array([
        [2.0 * np.cos(angle), -2.0 * np.sin(angle), 0.0, -90.3],
        [2.0 * np.sin(angle), 2.0 * np.cos(angle), 0.0, -126.7],
        [0.0, 0.0, 2.5, -72.1],
        [0.0, 0.0, 0.0, 1.0],
    ])
    image = nib.Nifti2Image(r2, oblique)
    image.header.set_sform(oblique, code=4)
    image.header.set_qform(oblique, code=4)
    cases.append(("nifti2_float32.nii.gz", image))
    header = nib.Nifti2Header(endianness=">")
    header.set_data_dtype(">i2")
    stored2 = rng.integers(-3000, 3000, size=shape2).astype(">i2")
    image = nib.Nifti2Image(stored2, affine, header=header)
    image.header.set_slope_inter(2.5e-4, -0.02)
    image.header.set_qform(affine, code=1)
    image.header.set_sform(None, code=0)
    cases.append(("nifti2_int16_scaled_bigendian.nii", image))
    reference = {"source": f"nibabel {nib.__version__} get_fdata, numpy {np.__version__}", "files": []}
    for name, image in cases:
        path = save(image, name)
        back = nib.load(path)
        reference["files"].append({
            "file": f"nifti/{name}",
            "sizeof_hdr": int(back.header["sizeof_hdr"]),
            "shape": list(back.shape),
            "affine": back.affine.tolist(),
            # Fortran (file) order, as strata stores voxels.
            "values": [float(v) for v in np.asarray(back.get_fdata(), dtype=np.float64).ravel(order="F")],
        })
    (DATA / "nifti_reference.json").write_text(json.dumps(reference) + "\n")


if __name__ == "__main__":
    main()
