"""Reference values for the similarity stage: numpy.corrcoef of a seeded feature matrix.

Writes tests/data/similarity_reference.json. Run: python3 tests/data/generators/similarity.py
"""
import json
import pathlib

import numpy as np

OUT = pathlib.Path(__file__).resolve().parents[1] / "similarity_reference.json"


def main():
    rng = np.random.default_rng(20261202)
    participants, features = 17, 300
    # Three latent profiles plus noise, so correlations span a useful range (positive and negative).
    profiles = rng.normal(size=(3, features))
    membership = rng.integers(0, 3, size=participants)
    x = (profiles[membership] * rng.uniform(0.2, 1.5, size=(participants, 1))
         + rng.normal(scale=1.0, size=(participants, features)) + rng.normal(size=(participants, 1)) * 3)
    x = x.astype(np.float32)
    r = np.corrcoef(x.astype(np.float64))
    OUT.write_text(json.dumps({
        "source": f"numpy {np.__version__} corrcoef (float64) of the float32 matrix",
        "participants": participants,
        "features": features,
        "x": [float(v) for v in x.ravel()],
        "r": [round(float(v), 12) for v in r.ravel()],
    }, indent=None) + "\n")


if __name__ == "__main__":
    main()
