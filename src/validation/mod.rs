//! Stage 6: are the communities real? For now: partition agreement (ARI, NMI, VI), used to
//! compare a partition with planted truth, with another density's partition, or with itself
//! under resampling.

mod agreement;

pub use agreement::{adjusted_rand_index, normalized_mutual_information, variation_of_information};
