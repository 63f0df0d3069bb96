//! Stage 7: features, partition and group labels to statistics.
//!
//! Per community and for the whole cohort: group means, the A - B difference, Welch t with
//! Welch-Satterthwaite degrees of freedom, two-sided p, Hedges g and Benjamini-Hochberg q, all
//! computed feature by feature from the participant-by-feature matrix ([`welch`], [`fdr`]);
//! the general linear model fitted to all features through one factorisation ([`glm`]); and
//! the tests on participant-level tables (community composition, covariate balance):
//! contingency tables ([`contingency`]) and one-way tests of k samples ([`oneway`]).
//! This stage only computes vectors of length F; choosing which participants form a group is the
//! pipeline's job, and writing the vectors as NIfTI / npy files is the maps stage's job.

// OWNER: stats helper.

pub mod balance;
pub mod contingency;
pub mod fdr;
pub mod glm;
pub mod model;
pub mod oneway;
pub mod permutation;
pub mod summaries;
pub mod welch;

pub use contingency::{
    chi_square_independence, cramers_v, fisher_exact, monte_carlo_chi_square, ChiSquareTest, FisherExact,
};
pub use fdr::benjamini_hochberg;
pub use glm::{
    contrast_f, contrast_t, fit_linear_model, nested_f, ContrastF, ContrastT, Design, LinearModel,
};
pub use oneway::{kruskal_wallis, one_way_anova, KruskalWallis, OneWayAnova};
pub use welch::{group_mean, hedges_correction, welch_comparison, Comparison, MIN_GROUP_SIZE};

use thiserror::Error;

/// A group comparison could not be computed.
///
/// [`welch_comparison`] knows only row indices, so its errors name the groups `A` and `B` and the
/// scope `comparison`; the caller that knows the community and the diagnosis labels calls
/// [`StatsError::for_community`] to put them into the message.
#[derive(Debug, Clone, PartialEq, Eq, Error)]
pub enum StatsError {
    /// A group has fewer participants than the comparison needs.
    #[error(
        "{scope}: group {group} has {count} participant(s); a Welch comparison needs at least {minimum} in each group (a variance needs two values); skip this comparison or merge small communities"
    )]
    TooFewParticipants {
        /// Where: `comparison`, or `community 2`, `community all` after [`StatsError::for_community`].
        scope: String,
        /// The group's label (`A`/`B` until relabelled).
        group: String,
        /// Participants found in the group.
        count: usize,
        /// Participants needed.
        minimum: usize,
    },
    /// A row index does not name a participant of the feature matrix.
    #[error(
        "{scope}: group {group} lists row {row}, but the feature matrix has {participant_count} participants (rows 0..{participant_count}); build the groups from the same cohort as the features"
    )]
    RowOutOfRange {
        /// Where.
        scope: String,
        /// The group's label.
        group: String,
        /// The offending row.
        row: usize,
        /// Rows in the feature matrix.
        participant_count: usize,
    },
    /// A participant appears in both groups (or twice in one).
    #[error(
        "{scope}: row {row} is listed in group {group_a} and in group {group_b}; each participant must belong to exactly one group of a comparison"
    )]
    OverlappingGroups {
        /// Where.
        scope: String,
        /// The duplicated row.
        row: usize,
        /// The first group holding it.
        group_a: String,
        /// The second group holding it (may equal `group_a` for a row listed twice).
        group_b: String,
    },
    /// A design matrix whose values do not fill rows x columns.
    #[error(
        "design matrix: {values} values do not form {rows} rows x {columns} columns; build the design with one row per participant of the model and at least one column"
    )]
    DesignShape {
        /// Rows (participants) expected.
        rows: usize,
        /// Columns of the design.
        columns: usize,
        /// Values found.
        values: usize,
    },
    /// A linear model with no residual degrees of freedom.
    #[error(
        "{scope}: {count} participant(s) for a model with {parameters} parameters; a linear model needs more participants than parameters: use fewer covariates or skip this scope"
    )]
    TooFewForModel {
        /// Where.
        scope: String,
        /// Participants in the model.
        count: usize,
        /// Design columns.
        parameters: usize,
    },
    /// A design column that is a linear combination of the columns before it.
    #[error(
        "{scope}: design column '{column}' is a linear combination of the columns before it (a covariate constant within this scope, collinear covariates, or a level without participants); drop that covariate or merge its levels"
    )]
    RankDeficient {
        /// Where.
        scope: String,
        /// The first dependent column.
        column: String,
    },
    /// A contrast that does not fit the design.
    #[error(
        "contrast: expected non-zero, finite, linearly independent weights for {expected} design columns, found {found}; give one weight per design column"
    )]
    ContrastShape {
        /// Design columns.
        expected: usize,
        /// Weights (or contrast rows) found.
        found: usize,
    },
    /// Two models that are not nested.
    #[error(
        "model comparison: the reduced model ({reduced_parameters} parameters) is not nested in the full model ({full_parameters} parameters) on the same participants and features"
    )]
    NotNested {
        /// Parameters of the full model.
        full_parameters: usize,
        /// Parameters of the reduced model.
        reduced_parameters: usize,
    },
    /// A table or sample set that a test cannot use.
    #[error("{test}: {message}")]
    InvalidInput {
        /// The test, e.g. `chi-square test of independence`.
        test: String,
        /// What was found and what is needed.
        message: String,
    },
}

impl StatsError {
    /// The same error with its scope set to `community <community>` and groups `A`/`B` renamed
    /// to the diagnosis labels, e.g. `for_community("2", "insomnia", "control")`.
    pub fn for_community(self, community: &str, label_a: &str, label_b: &str) -> StatsError {
        let scope = format!("community {community}");
        let rename = |group: String| match group.as_str() {
            welch::GROUP_A => label_a.to_string(),
            welch::GROUP_B => label_b.to_string(),
            _ => group,
        };
        match self {
            StatsError::TooFewParticipants { group, count, minimum, .. } => {
                StatsError::TooFewParticipants { scope, group: rename(group), count, minimum }
            }
            StatsError::RowOutOfRange { group, row, participant_count, .. } => {
                StatsError::RowOutOfRange { scope, group: rename(group), row, participant_count }
            }
            StatsError::OverlappingGroups { row, group_a, group_b, .. } => StatsError::OverlappingGroups {
                scope,
                row,
                group_a: rename(group_a),
                group_b: rename(group_b),
            },
            StatsError::TooFewForModel { count, parameters, .. } => {
                StatsError::TooFewForModel { scope, count, parameters }
            }
            StatsError::RankDeficient { column, .. } => StatsError::RankDeficient { scope, column },
            other => other,
        }
    }
}
