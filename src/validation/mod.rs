//! Stage 6: are the communities real? Partition agreement (ARI, NMI, VI), used to compare a
//! partition with planted truth, with another density's partition, or with itself under
//! resampling; and resampling stability (subsample ARI, per-community best-match Jaccard,
//! per-participant confidence); and the rotation null test of one homogeneous population.

mod agreement;
mod null;
mod stability;

pub use agreement::{adjusted_rand_index, normalized_mutual_information, variation_of_information};
pub use null::{
    null_test, null_test_with_progress, quantile_sorted, NullComparison, NullError, NullModel, NullOptions,
    NullResult, StructureStatistics, DEFAULT_NULL_DRAWS, NULL_QUANTILES,
};
pub use stability::{
    compare_subsample, median, stability, StabilityError, StabilityOptions, StabilityResult,
    SubsampleComparison, DEFAULT_SUBSAMPLES, DEFAULT_SUBSAMPLE_FRACTION, MIN_SUBSAMPLE_PARTICIPANTS,
};
