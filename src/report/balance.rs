//! `composition.tsv` and `covariates.tsv`: the balance tests of the stats stage as TSV tables,
//! one row per test (columns documented in docs/outputs.md).

use super::tables::{format_number, Table};
use crate::stats::balance::BalanceTest;

/// The columns of `composition.tsv` and `covariates.tsv`, in order.
pub const BALANCE_COLUMNS: [&str; 15] = [
    "variable",
    "kind",
    "scope",
    "test",
    "n",
    "n_missing",
    "statistic",
    "dof",
    "dof_denominator",
    "p",
    "p_exact",
    "p_exact_method",
    "effect_size",
    "effect_size_name",
    "note",
];

/// The tests as a table with the [`BALANCE_COLUMNS`]; `n/a` for values that do not apply.
pub fn balance_table(tests: &[BalanceTest]) -> Table {
    let text = |value: &str| if value.is_empty() { "n/a".to_string() } else { value.to_string() };
    let mut table = Table::new(BALANCE_COLUMNS);
    for test in tests {
        table.push(vec![
            test.variable.clone(),
            test.kind.to_string(),
            test.scope.clone(),
            test.test.to_string(),
            test.n.to_string(),
            test.n_missing.to_string(),
            format_number(test.statistic),
            format_number(test.dof),
            format_number(test.dof_denominator),
            format_number(test.p),
            format_number(test.p_exact),
            text(test.p_exact_method),
            format_number(test.effect_size),
            text(test.effect_size_name),
            text(&test.note),
        ]);
    }
    table
}
