//! The LFR recovery curve (N = 1000, average degree 20, mixing 0.1 to 0.7): NMI of each strata
//! method's partition to the planted communities, beside the reference packages' on the same
//! graphs.
//!
//! Reference data: tests/data/graphs_reference.json (tests/data/generators/graphs.py: networkx
//! 3.6.1's LFR generator, Lancichinetti, Fortunato & Radicchi 2008; infomap 2.16.0, leidenalg
//! 0.12.0, igraph 1.0.0 multilevel, each the best of 10 seeded trials; scikit-learn 1.9.1 NMI).
//! The table printed here is docs/methods.md's recovery table.

mod util;

use strata::communities::Method;
use strata::validation::normalized_mutual_information;
use util::graphs::{labels, reference_graph, reference_graphs};

/// Trials per method and graph: the reference packages' best of 10.
const TRIALS: u64 = 10;

/// strata's NMI may fall short of the reference package's by at most this much (a different
/// optimum of the same objective on a noisy graph; strata's choice of bound).
const NMI_SLACK: f64 = 0.02;

#[test]
fn recovery_curve_matches_the_reference_packages() {
    println!("| mixing | strata infomap | infomap package | strata leiden | leidenalg | strata louvain | igraph multilevel |");
    println!("|---|---|---|---|---|---|---|");
    for (name, entry) in reference_graphs() {
        if !name.starts_with("lfr") {
            continue;
        }
        let graph = reference_graph(&entry);
        let planted = labels(&entry["planted"]);
        let mut row = format!("| {} |", entry["lfr"]["mixing"]);
        for (method, reference_key) in [
            (Method::Infomap, "infomap"),
            (Method::Leiden, "leidenalg"),
            (Method::Louvain, "igraph_multilevel"),
        ] {
            let best = (0..TRIALS)
                .map(|trial| {
                    let labels = method.run(&graph, 1.0, &mut strata::seed::rng(5, "test-lfr", &[trial]));
                    let quality = method.quality(&graph, &labels, 1.0);
                    (labels, method.score(quality))
                })
                .max_by(|a, b| a.1.total_cmp(&b.1))
                .unwrap()
                .0;
            let nmi = normalized_mutual_information(&planted, &best);
            let reference = entry["nmi_to_planted"][reference_key].as_f64().unwrap();
            row += &format!(" {nmi:.3} | {reference:.3} |");
            assert!(
                nmi >= reference - NMI_SLACK,
                "{name} {}: NMI {nmi} vs reference {reference}",
                method.name()
            );
        }
        println!("{row}");
    }
}
