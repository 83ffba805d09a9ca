//! How far a long job has come, for a progress display.

/// Progress of a job counted in samples (complex input samples for `demod` and `measure`,
/// generated samples for `synth`, both for `demo`).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub struct Progress {
    /// Samples done so far.
    pub done: u64,
    /// Samples the job will do, when known (a stream of unknown length: `None`).
    pub total: Option<u64>,
}

impl Progress {
    /// The fraction done, when the total is known (1 for an empty job).
    pub fn fraction(&self) -> Option<f64> {
        self.total.map(|t| {
            if t == 0 {
                1.0
            } else {
                (self.done as f64 / t as f64).min(1.0)
            }
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn fraction_is_bounded_and_absent_without_a_total() {
        let p = |done, total| Progress { done, total };
        assert_eq!(p(5, None).fraction(), None);
        assert_eq!(p(5, Some(20)).fraction(), Some(0.25));
        assert_eq!(p(30, Some(20)).fraction(), Some(1.0));
        assert_eq!(p(0, Some(0)).fraction(), Some(1.0));
    }
}
