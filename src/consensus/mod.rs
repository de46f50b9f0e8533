//! Consensus across annotators (in progress).
