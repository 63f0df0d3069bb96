"""Reference values for the rotation null test (src/validation/null.rs), computed in feature
space with numpy where strata works in participant space.

For a seeded float32 feature matrix X (N participants x F features): the participants' Pearson
similarity S = numpy.corrcoef(X); the norms of the row-centred rows y_i = x_i - mean(x_i); the
eigenvalues of the centred Gram matrix H Y Yt H (numpy.linalg.eigvalsh), the spectrum every null
cohort shares; and one null cohort built explicitly in feature space: a rotation O of
participant space that fixes the vector of ones (O = V Q Vt + 1 1t / N, Q Haar from the QR of a
Gaussian matrix with positive-diagonal R, V an orthonormal basis of the complement of 1), the
null rows y_bar + O (Y - 1 y_bar) and their similarity numpy.corrcoef.

Writes tests/data/null_reference.json. Run: python3 tests/data/generators/null_model.py
"""
import json
import pathlib

import numpy as np

OUT = pathlib.Path(__file__).resolve().parents[1] / "null_reference.json"


def main():
    rng = np.random.default_rng(20261203)
    participants, features = 12, 60
    profiles = rng.normal(size=(2, features))
    membership = np.arange(participants) % 2
    x = (0.8 * profiles[membership] + rng.normal(size=(participants, features))
         + 0.5 * rng.normal(size=(1, features)) + rng.normal(size=(participants, 1)))
    x = x.astype(np.float32)
    x64 = x.astype(np.float64)
    s = np.corrcoef(x64)
    y = x64 - x64.mean(axis=1, keepdims=True)
    norms = np.linalg.norm(y, axis=1)
    centring = np.eye(participants) - np.ones((participants, participants)) / participants
    centred_gram = centring @ (y @ y.T) @ centring
    spectrum = np.sort(np.linalg.eigvalsh(centred_gram))[::-1]
    spectrum = spectrum[spectrum > 1e-10 * spectrum[0]]

    # A rotation of participant space that fixes 1.
    basis, _ = np.linalg.qr(centring[:, : participants - 1])
    gaussian = rng.normal(size=(participants - 1, participants - 1))
    q, r = np.linalg.qr(gaussian)
    q = q * np.sign(np.diag(r))
    rotation = basis @ q @ basis.T + np.ones((participants, participants)) / participants
    mean_row = y.mean(axis=0, keepdims=True)
    null_rows = mean_row + rotation @ (y - mean_row)
    s_null = np.corrcoef(null_rows)
    null_centred = centring @ (null_rows @ null_rows.T) @ centring
    null_spectrum = np.sort(np.linalg.eigvalsh(null_centred))[::-1][: len(spectrum)]

    OUT.write_text(json.dumps({
        "source": f"numpy {np.__version__}: corrcoef, linalg.eigvalsh, linalg.qr (float64) of the float32 matrix",
        "participants": participants,
        "features": features,
        "x": [float(v) for v in x.ravel()],
        "s": [round(float(v), 12) for v in s.ravel()],
        "norms": [round(float(v), 12) for v in norms],
        "spectrum": [round(float(v), 10) for v in spectrum],
        "rotation": [round(float(v), 15) for v in rotation.ravel()],
        "s_null": [round(float(v), 12) for v in s_null.ravel()],
        "null_spectrum": [round(float(v), 10) for v in null_spectrum],
    }, indent=None) + "\n")


if __name__ == "__main__":
    main()
