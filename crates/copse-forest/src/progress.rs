//! Progress reports of a training run, for a progress bar.

/// Which phase of training a [`Progress`] report is about.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Stage {
    /// Growing trees (`done` trees of `total`).
    Growing,
    /// Out-of-bag predictions (`done` row blocks of `total`).
    OutOfBag,
    /// Out-of-bag permutation importance (`done` trees of `total`).
    Importance,
}

/// A progress report: `done` units of `total` finished in `stage`. Reports may arrive
/// from several threads at once and slightly out of order.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Progress {
    /// The phase.
    pub stage: Stage,
    /// Units finished so far.
    pub done: usize,
    /// Units in the phase.
    pub total: usize,
}
