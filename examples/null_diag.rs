use strata::demo::Scenario;
use strata::similarity::{pearson, SimilarityMatrix};
use strata::validation::NullModel;
fn stats(s: &SimilarityMatrix) -> String {
    let n = s.values.nrows();
    let mut v = Vec::new();
    for i in 0..n {
        for j in (i + 1)..n {
            v.push(s.values[[i, j]] as f64);
        }
    }
    let m = v.iter().sum::<f64>() / v.len() as f64;
    let sd = (v.iter().map(|x| (x - m).powi(2)).sum::<f64>() / v.len() as f64).sqrt();
    // row-mean spread
    let rm: Vec<f64> = (0..n)
        .map(|i| (0..n).filter(|&j| j != i).map(|j| s.values[[i, j]] as f64).sum::<f64>() / (n - 1) as f64)
        .collect();
    let rmm = rm.iter().sum::<f64>() / n as f64;
    let rsd = (rm.iter().map(|x| (x - rmm).powi(2)).sum::<f64>() / n as f64).sqrt();
    let model = NullModel::new(s, None).unwrap();
    let sp: Vec<String> = model.spectrum().iter().take(5).map(|x| format!("{x:.3}")).collect();
    format!("mean {m:.4} sd {sd:.4} rowmean sd {rsd:.4} spectrum {}", sp.join(" "))
}
fn main() {
    let scenario = Scenario { seed: 1001, ..Scenario::default() }.homogeneous();
    let (features, _) = strata::demo::matrix_features(&scenario);
    let s = pearson(&features);
    println!("observed: {}", stats(&s));
    let (_, inv) = strata::similarity::standardise_rows(&features);
    let norms: Vec<f64> = inv.iter().map(|v| 1.0 / v).collect();
    let model = NullModel::new(&s, Some(&norms)).unwrap();
    for d in 0..3 {
        let mut rng = strata::seed::rng(5, "x", &[d]);
        let null = model.draw(&mut rng);
        println!("null {d}:   {}", stats(&null));
    }
}
