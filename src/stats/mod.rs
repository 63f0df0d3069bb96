//! Stage 7: features, partition and group labels to statistics.
//!
//! Per community and for the whole cohort: group means, the A - B difference, Welch t with
//! Welch-Satterthwaite degrees of freedom, two-sided p, Hedges g, Benjamini-Hochberg q.
//! Writing the results is the maps stage's job.

// OWNER: stats helper.
