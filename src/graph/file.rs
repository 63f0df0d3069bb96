//! Graphs the user already has: a weighted undirected edge list or a dense `.npy` matrix, for
//! `strata partition`. (Reading lives here rather than in `read/` because its product is a graph.)
//!
//! Edge lists hold one edge per line, `i j w` separated by tabs or spaces (`w` optional, 1 by
//! default); blank lines and lines starting with `#` are skipped. Node names are any tokens:
//! whole numbers are ordered numerically, other names in order of first appearance. A pair given
//! twice (in either order) has its weights added, as in a multigraph's simple projection.

use std::collections::HashMap;
use std::path::Path;

use ndarray::Array2;

use super::ParticipantGraph;
use crate::read::matrix::read_matrix;
use crate::read::ReadError;

/// A graph read from a file: node names in graph order, and the graph.
#[derive(Debug, Clone)]
pub struct GraphFile {
    /// Name of each node (the edge list's token, or the `.npy` row index).
    pub names: Vec<String>,
    /// The weighted undirected graph.
    pub graph: ParticipantGraph,
    /// Pairs that were listed more than once (their weights were added).
    pub repeated_pairs: usize,
}

fn format_error(path: &Path, line: usize, problem: String) -> ReadError {
    ReadError::Table { path: path.to_path_buf(), line, problem }
}

/// Reads an edge list or, for a `.npy` file, a dense symmetric weight matrix (every positive
/// off-diagonal entry an edge, the diagonal as self-loops).
///
/// # Errors
/// The file cannot be read; a line has not 2 or 3 fields, or a weight that is not a finite
/// number of at least 0; the matrix is not square, not symmetric, or holds NaN or negative
/// values.
pub fn read_graph(path: &Path) -> Result<GraphFile, ReadError> {
    if path.to_string_lossy().to_ascii_lowercase().ends_with(".npy") {
        let matrix = read_matrix(path, "(graph)").map_err(|error| match error {
            ReadError::Invalid { path, problem, .. } => ReadError::Format { path, problem },
            other => other,
        })?;
        return graph_from_matrix(path, &matrix);
    }
    let text =
        std::fs::read_to_string(path).map_err(|source| ReadError::Io { path: path.to_path_buf(), source })?;
    let mut tokens: Vec<String> = Vec::new();
    let mut index: HashMap<String, usize> = HashMap::new();
    let mut raw: Vec<(usize, usize, f64)> = Vec::new();
    for (number, line) in text.lines().enumerate() {
        let line_number = number + 1;
        let trimmed = line.trim();
        if trimmed.is_empty() || trimmed.starts_with('#') {
            continue;
        }
        let fields: Vec<&str> = trimmed.split_whitespace().collect();
        if fields.len() != 2 && fields.len() != 3 {
            return Err(format_error(
                path,
                line_number,
                format!("{} fields; expected 'i j' or 'i j w' separated by tabs or spaces", fields.len()),
            ));
        }
        let weight = match fields.get(2) {
            None => 1.0,
            Some(text) => match text.parse::<f64>() {
                Ok(value) if value.is_finite() && value >= 0.0 => value,
                _ => {
                    return Err(format_error(
                        path,
                        line_number,
                        format!("weight '{text}' is not a finite number of at least 0; community detection needs non-negative weights (drop or shift negative edges first)"),
                    ))
                }
            },
        };
        let mut node = |token: &str| {
            *index.entry(token.to_string()).or_insert_with(|| {
                tokens.push(token.to_string());
                tokens.len() - 1
            })
        };
        let (a, b) = (node(fields[0]), node(fields[1]));
        raw.push((a, b, weight));
    }
    if tokens.is_empty() {
        return Err(ReadError::Format {
            path: path.to_path_buf(),
            problem: "no edges; expected lines 'i j w' (tab or space separated)".into(),
        });
    }
    // Whole-number names in numeric order, others after them in order of appearance.
    let mut order: Vec<usize> = (0..tokens.len()).collect();
    order.sort_by_key(|&t| match tokens[t].parse::<u64>() {
        Ok(number) => (0, number, t),
        Err(_) => (1, 0, t),
    });
    let mut position = vec![0usize; tokens.len()];
    for (rank, &t) in order.iter().enumerate() {
        position[t] = rank;
    }
    let names: Vec<String> = order.iter().map(|&t| tokens[t].clone()).collect();
    let mut merged: HashMap<(usize, usize), f64> = HashMap::with_capacity(raw.len());
    let mut repeated_pairs = 0;
    for (a, b, weight) in raw {
        let (a, b) = (position[a], position[b]);
        let key = (a.min(b), a.max(b));
        match merged.get_mut(&key) {
            Some(existing) => {
                *existing += weight;
                repeated_pairs += 1;
            }
            None => {
                merged.insert(key, weight);
            }
        }
    }
    let mut edges: Vec<(usize, usize, f64)> =
        merged.into_iter().filter(|&(_, w)| w > 0.0).map(|((a, b), w)| (a, b, w)).collect();
    edges.sort_unstable_by(|x, y| x.0.cmp(&y.0).then(x.1.cmp(&y.1)));
    Ok(GraphFile { graph: ParticipantGraph::from_edges(names.len(), &edges), names, repeated_pairs })
}

/// Relative tolerance of the symmetry check of a dense weight matrix (float32 round-off).
const SYMMETRY_TOLERANCE: f64 = 1e-6;

fn graph_from_matrix(path: &Path, matrix: &Array2<f64>) -> Result<GraphFile, ReadError> {
    let n = matrix.nrows();
    let bad = |problem: String| ReadError::Format { path: path.to_path_buf(), problem };
    if matrix.ncols() != n || n == 0 {
        return Err(bad(format!(
            "matrix of shape {} x {}; a graph needs a square N x N weight matrix",
            n,
            matrix.ncols()
        )));
    }
    let mut edges = Vec::new();
    for i in 0..n {
        for j in i..n {
            let (a, b) = (matrix[[i, j]], matrix[[j, i]]);
            if !a.is_finite() || !b.is_finite() {
                return Err(bad(format!(
                    "entry ({i}, {j}) is not a finite number; replace NaN and infinite weights"
                )));
            }
            if (a - b).abs() > SYMMETRY_TOLERANCE * a.abs().max(b.abs()).max(1.0) {
                return Err(bad(format!(
                    "not symmetric: entry ({i}, {j}) = {a} but ({j}, {i}) = {b}; an undirected graph needs a symmetric matrix"
                )));
            }
            if a < 0.0 {
                return Err(bad(format!(
                    "entry ({i}, {j}) = {a} is negative; community detection needs non-negative weights (zero the negative entries or threshold the matrix first)"
                )));
            }
            if a > 0.0 {
                edges.push((i, j, a));
            }
        }
    }
    Ok(GraphFile {
        names: (0..n).map(|i| i.to_string()).collect(),
        graph: ParticipantGraph::from_edges(n, &edges),
        repeated_pairs: 0,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn edge_list_forms() {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("g.tsv");
        std::fs::write(&path, "# comment\n10 2 0.5\n2\t3\n\n3 10 2\n2 10 0.25\n").unwrap();
        let file = read_graph(&path).unwrap();
        assert_eq!(file.names, vec!["2", "3", "10"]);
        assert_eq!(file.graph.edge_count(), 3);
        assert_eq!(file.repeated_pairs, 1);
        // 2-10 listed twice: 0.5 + 0.25.
        let (targets, weights) = file.graph.neighbours(0);
        let to_ten = targets.iter().position(|&t| t == 2).unwrap();
        assert!((weights[to_ten] - 0.75).abs() < 1e-12);
        std::fs::write(&path, "a b\nb c 1\nc d -1\n").unwrap();
        let error = read_graph(&path).unwrap_err().to_string();
        assert!(error.contains("line 3") && error.contains("non-negative"), "{error}");
        std::fs::write(&path, "a b 1 2\n").unwrap();
        assert!(read_graph(&path).unwrap_err().to_string().contains("4 fields"));
    }
}
