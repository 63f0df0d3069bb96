#!/usr/bin/env python3
"""Check a strata-written .nii.gz with nibabel against expected values.

Usage: check_nifti_nibabel.py MAP.nii.gz EXPECTED.json
EXPECTED.json keys: shape [nx, ny, nz]; data (flat, Fortran order, null for NaN); affine (4x4);
intent_code; intent_p1; intent_name; sform_code; qform_code; cal_min; cal_max (optional).
Header facts checked against nifti1.h: sizeof_hdr 348, vox_offset 352, magic "n+1",
datatype float32 (16), scl_slope 1, scl_inter 0. Exits 1 listing every mismatch; 0 when all pass.
Run by tests/maps_nifti.rs (nibabel must be importable).
"""
import gzip
import json
import math
import sys

import nibabel as nib
import numpy as np
from nibabel.batteryrunners import BatteryRunner


def main():
    path, expected_path = sys.argv[1], sys.argv[2]
    with open(expected_path) as handle:
        expected = json.load(handle)
    image = nib.load(path)
    # nib.load's image.header is a working copy (vox_offset reset, scaling moved to dataobj):
    # read the header exactly as stored in the file for the on-disk fields.
    with gzip.open(path, "rb") as stream:
        header = nib.Nifti1Header.from_fileobj(stream, check=False)
    problems = []

    def check(name, found, wanted):
        if found != wanted:
            problems.append(f"{name}: found {found!r}, expected {wanted!r}")

    check("sizeof_hdr", int(header["sizeof_hdr"]), 348)
    check("vox_offset", float(header["vox_offset"]), 352.0)
    check("magic", header["magic"].item(), b"n+1")
    check("datatype", int(header["datatype"]), 16)
    check("scl_slope", float(header["scl_slope"]), 1.0)
    check("scl_inter", float(header["scl_inter"]), 0.0)
    check("shape", list(image.shape), expected["shape"])
    check("intent_code", int(header["intent_code"]), expected["intent_code"])
    if not math.isclose(float(header["intent_p1"]), expected["intent_p1"], rel_tol=1e-6, abs_tol=1e-12):
        problems.append(f"intent_p1: found {float(header['intent_p1'])}, expected {expected['intent_p1']}")
    check("intent_name", header["intent_name"].item().decode(), expected["intent_name"])
    check("sform_code", int(header["sform_code"]), expected["sform_code"])
    check("qform_code", int(header["qform_code"]), expected["qform_code"])
    affine = np.array(expected["affine"], dtype=np.float64)
    if not np.allclose(header.get_sform(), affine, atol=1e-5):
        problems.append(f"sform: found {header.get_sform().tolist()}, expected {affine.tolist()}")
    if expected["qform_code"] > 0 and not np.allclose(header.get_qform(), affine, atol=1e-4):
        problems.append(f"qform: found {header.get_qform().tolist()}, expected {affine.tolist()}")
    if not np.allclose(image.affine, affine, atol=1e-5):
        problems.append(f"affine: found {image.affine.tolist()}, expected {affine.tolist()}")
    for key in ("cal_min", "cal_max"):
        if key in expected and not math.isclose(float(header[key]), expected[key], rel_tol=1e-6, abs_tol=1e-12):
            problems.append(f"{key}: found {float(header[key])}, expected {expected[key]}")

    data = np.asanyarray(image.dataobj)
    check("dtype", str(data.dtype), "float32")
    wanted = np.array([np.nan if v is None else v for v in expected["data"]], dtype=np.float32)
    found = data.ravel(order="F")
    if found.shape != wanted.shape or not np.allclose(found, wanted, rtol=0, atol=0, equal_nan=True):
        bad = np.nonzero(~np.isclose(found, wanted, rtol=0, atol=0, equal_nan=True))[0][:5]
        problems.append(f"data differ at flat voxels {bad.tolist()}")

    # nibabel's own battery of header checks, run without fixing anything.
    battery = BatteryRunner(type(header)._get_checks())
    for report in battery.check_only(header):
        if report.problem_level > 0:
            problems.append(f"nibabel header check: {report.problem_msg}")

    if problems:
        print(f"{path}: {len(problems)} mismatch(es)", file=sys.stderr)
        for problem in problems:
            print("  " + problem, file=sys.stderr)
        sys.exit(1)
    print(f"{path}: nibabel {nib.__version__}: all checks passed")


if __name__ == "__main__":
    main()
