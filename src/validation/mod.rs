//! Stage 6: are the communities real? For now: partition agreement (ARI, NMI, VI).

// OWNER: communities helper.
