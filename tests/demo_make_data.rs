//! Regenerates the committed demo files: `demo-data/` (small matrices cohort in npy, csv and tsv)
//! and `atlases/northfield100/`. Run with `cargo test --test demo_make_data -- --ignored`.

use std::path::Path;

use strata::demo::{self, Scenario};

/// Participants of the small committed cohort (keeps demo-data well under 2 MB).
const SMALL_COHORT_PARTICIPANTS: usize = 24;

#[test]
#[ignore = "writes the committed demo-data/ and atlases/ folders"]
fn make_demo_data() {
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    demo::write_atlas(&root.join("atlases/northfield100")).unwrap();
    let dir = root.join("demo-data/small-matrices");
    if dir.exists() {
        std::fs::remove_dir_all(&dir).unwrap();
    }
    let scenario = Scenario { participant_count: SMALL_COHORT_PARTICIPANTS, ..Scenario::default() };
    let cohort = demo::write_matrix_cohort(&scenario, &dir).unwrap();
    let (_, matrices) = demo::generate_matrix_values(&scenario);
    // Participants 1-2 as csv and 3-4 as tsv, to show the text formats (npy removed for them).
    for (index, extension, delimiter) in
        [(0, "csv", ','), (1, "csv", ','), (2, "tsv", '\t'), (3, "tsv", '\t')]
    {
        let id = &cohort.participants[index].participant_id;
        let matrices_dir = dir.join("matrices");
        std::fs::remove_file(matrices_dir.join(format!("{id}_conn.npy"))).unwrap();
        demo::write_matrix_text(
            &matrices[index],
            &matrices_dir.join(format!("{id}_conn.{extension}")),
            delimiter,
        )
        .unwrap();
    }
}
