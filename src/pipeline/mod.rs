//! The streaming runtime and the receive job.
