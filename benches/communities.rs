//! Community-detection timings (run through benches/communities.sh).
//!
//! `cargo bench --bench communities -- trials DIR` builds participant graphs of 1,000 and 5,000
//! participants (strata's generator: four planted subgroups, separation 0.3, 100-region
//! matrices) at densities 5% and 20%, writes each as an edge list DIR/n<N>-d<D>.tsv for the
//! reference packages, and prints the median seconds of one trial per method. `... sweep` times
//! the whole default sweep plus consensus for 1,000 participants, once per method. Figures are
//! printed as `key value` lines.

use std::io::Write;
use std::path::Path;
use std::time::Instant;

use strata::communities::{detect, CommunityOptions, Method};
use strata::demo::Scenario;
use strata::graph::RankedPairs;
use strata::similarity::pearson;

const METHODS: [Method; 3] = [Method::Infomap, Method::Leiden, Method::Louvain];

fn similarity(participants: usize) -> strata::similarity::SimilarityMatrix {
    let scenario = Scenario {
        participant_count: participants,
        subgroup_proportions: vec![0.25; 4],
        separation: 0.3,
        ..Scenario::default()
    };
    let (features, _) = strata::demo::matrix_features(&scenario);
    pearson(&features)
}

fn median(mut values: Vec<f64>) -> f64 {
    values.sort_by(f64::total_cmp);
    values[values.len() / 2]
}

fn trials(dir: &Path) {
    std::fs::create_dir_all(dir).unwrap();
    for participants in [1000usize, 5000] {
        let ranked = RankedPairs::new(&similarity(participants));
        for density in [0.05, 0.2] {
            let graph = ranked.graph_at(density);
            let name = format!("n{participants}-d{:02}", (density * 100.0).round() as u32);
            let mut out =
                std::io::BufWriter::new(std::fs::File::create(dir.join(format!("{name}.tsv"))).unwrap());
            for node in 0..graph.node_count() {
                let (targets, weights) = graph.neighbours(node);
                for (&target, &weight) in targets.iter().zip(weights) {
                    if (target as usize) > node {
                        writeln!(out, "{node}\t{target}\t{weight}").unwrap();
                    }
                }
            }
            drop(out);
            println!("graph {name} nodes {} edges {}", graph.node_count(), graph.edge_count());
            let repeats = if participants >= 5000 { 3 } else { 5 };
            for method in METHODS {
                let seconds: Vec<f64> = (0..repeats)
                    .map(|trial| {
                        let mut rng = strata::seed::rng(1, "bench", &[trial]);
                        let start = Instant::now();
                        let labels = method.run(&graph, 1.0, &mut rng);
                        let elapsed = start.elapsed().as_secs_f64();
                        std::hint::black_box(labels);
                        elapsed
                    })
                    .collect();
                println!("trial_seconds strata {} {name} {:.4}", method.name(), median(seconds));
            }
        }
    }
}

fn sweep() {
    let similarity = similarity(1000);
    for method in METHODS {
        let options = CommunityOptions { method, ..CommunityOptions::default() };
        let start = Instant::now();
        let result = detect(&similarity, &options).expect("detect");
        println!(
            "sweep_seconds {} n1000 {:.2} communities {} threads {}",
            method.name(),
            start.elapsed().as_secs_f64(),
            result.partition.community_count(),
            rayon::current_num_threads()
        );
    }
}

fn main() {
    let args: Vec<String> = std::env::args().filter(|arg| arg != "--bench").collect();
    match args.get(1..).unwrap_or_default() {
        [command, dir] if command == "trials" => trials(Path::new(dir)),
        [command] if command == "sweep" => sweep(),
        _ => eprintln!(
            "usage: cargo bench --bench communities -- trials DIR | sweep (see benches/communities.sh)"
        ),
    }
}
