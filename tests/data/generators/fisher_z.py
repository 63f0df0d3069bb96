"""Reference values for Fisher's z: numpy.arctanh of correlations across (-1, 1).

Writes tests/data/fisher_z_reference.json. Run: python3 tests/data/generators/fisher_z.py
"""
import json
import pathlib

import numpy as np

OUT = pathlib.Path(__file__).resolve().parents[1] / "fisher_z_reference.json"


def main():
    r = [-0.999, -0.9, -0.5, -0.1234, 0.0, 1e-6, 0.3, 0.5, 0.75, 0.95, 0.99, 0.9999]
    OUT.write_text(json.dumps({
        "source": f"numpy {np.__version__} arctanh (float64)",
        "r": r,
        "z": [float(v) for v in np.arctanh(np.array(r, dtype=np.float64))],
    }) + "\n")


if __name__ == "__main__":
    main()
