//! Novelty: how far each learner state lies from the expert demonstrations, calibrated so
//! that a known share of expert-like states is flagged.
//!
//! Pipeline: per-feature [`scale`]s, an exact k-nearest-neighbour [`index`] over the scaled
//! demonstration states (a kiddo k-d tree, or the [`subspace`] path for wide states), a
//! split-[`conformal`] calibration on held-out demonstration episodes ([`model`], kept as a file
//! by [`saved`]), and
//! per-step signals for a round ([`score`], [`signals`]), saved to the campaign by [`store`].
//!
//! The novelty of a state is its distance to the k-th nearest demonstration state in scaled
//! units (k-NN out-of-distribution scoring; Sun, Ming, Zhu & Li 2022, "Out-of-distribution
//! detection with deep nearest neighbors").

pub mod conformal;
pub mod digest;
pub mod eigen;
pub mod explain;
pub mod index;
pub mod model;
pub mod phase;
pub mod query;
pub mod saved;
pub mod scale;
pub mod score;
pub mod signals;
pub mod store;
pub mod subspace;
pub mod synth;

pub use conformal::Conformal;
pub use model::{EpisodeSplit, NoveltyModel, build_model, build_model_from};
pub use score::{RoundScores, score_round, score_steps};

/// Why a model could not be built or a round not scored.
#[derive(Debug, thiserror::Error)]
pub enum NoveltyError {
    /// Calibration needs demonstration episodes to hold out.
    #[error(
        "demonstrations: {found} episode(s); calibration needs at least 2 (one to fit, one to hold out)"
    )]
    TooFewEpisodes {
        /// Episodes found.
        found: usize,
    },
    /// The fit part holds fewer states than neighbours asked for.
    #[error(
        "campaign.json novelty.k: k = {k} but the fit demonstrations hold only {states} state(s)"
    )]
    TooFewStates {
        /// The campaign's k.
        k: usize,
        /// States in the fit part.
        states: usize,
    },
    /// alpha is below the smallest p-value the calibration can give: nothing could be flagged.
    #[error(
        "campaign.json novelty.alpha: alpha = {alpha} is below what {n} calibration state(s) can resolve \
         (the smallest p-value is 1/{n1}); the smallest reachable alpha is {smallest} \
         (or add demonstration episodes)",
        n1 = n + 1
    )]
    AlphaBelowFloor {
        /// The campaign's alpha.
        alpha: f64,
        /// Calibration states.
        n: usize,
        /// The smallest reachable alpha, rounded up to four significant digits.
        smallest: String,
    },
    /// A feature scale is not a positive number.
    #[error("spec.features: every scale must be a positive number")]
    BadScale,
    /// The steps do not have the demonstrations' dimensions.
    #[error("steps have {found} state features, the demonstrations {expected}")]
    DimensionMismatch {
        /// Demonstration state dimension.
        expected: usize,
        /// The steps' state dimension.
        found: usize,
    },
    /// The index could not be built.
    #[error("building the index: {0}")]
    Index(String),
    /// A saved scores file could not be read or written.
    #[error("{path}: {message}")]
    Store {
        /// The file.
        path: std::path::PathBuf,
        /// What went wrong (with the array or field).
        message: String,
    },
    /// The caller cancelled.
    #[error("cancelled")]
    Cancelled,
}
