//! Fisher z against numpy's arctanh (tests/data/generators/fisher_z.py, numpy 2.4.6), and the
//! documented clip near |r| = 1.

use strata::features::{fisher_z, FISHER_Z_CLIP};

#[test]
fn fisher_z_matches_numpy_arctanh() {
    let text =
        std::fs::read_to_string(concat!(env!("CARGO_MANIFEST_DIR"), "/tests/data/fisher_z_reference.json"))
            .unwrap();
    let json: serde_json::Value = serde_json::from_str(&text).unwrap();
    let r = json["r"].as_array().unwrap();
    let z = json["z"].as_array().unwrap();
    assert_eq!(r.len(), 12);
    for (r, z) in r.iter().zip(z) {
        let (r, z) = (r.as_f64().unwrap(), z.as_f64().unwrap());
        assert!(
            (fisher_z(r) - z).abs() <= 1e-12 * z.abs().max(1.0),
            "atanh({r}): strata {} numpy {z}",
            fisher_z(r)
        );
    }
    // |r| = 1 is clipped at 1 - FISHER_Z_CLIP: finite, and equal to atanh of the clip.
    assert!((fisher_z(1.0) - (1.0 - FISHER_Z_CLIP).atanh()).abs() < 1e-12);
    assert!((fisher_z(-1.0) + (1.0 - FISHER_Z_CLIP).atanh()).abs() < 1e-12);
}
