//! The learners the demo scenario and the study can fit: which model drives the rounds (and
//! is refit after every round of the study).

use std::sync::Arc;

use crate::sim::features::{FEATURE_COUNT, Features, demo_spec};
use crate::sim::knn::KnnLearner;
use crate::sim::rbf::{RbfLearner, RbfSettings};
use crate::sim::{Action, DemoConfig, Learner, Observation, Policy};

/// Which learner is fitted.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum LearnerKind {
    /// Linear ridge regression with the demo scenario's strong penalty ([`Learner`]).
    Ridge,
    /// Distance-weighted k-nearest-neighbour regression ([`KnnLearner`]).
    Knn,
    /// Ridge regression on Gaussian radial basis functions ([`RbfLearner`]).
    Rbf,
}

impl LearnerKind {
    /// Short name used on the command line and in reports.
    pub fn name(self) -> &'static str {
        match self {
            LearnerKind::Ridge => "ridge",
            LearnerKind::Knn => "knn",
            LearnerKind::Rbf => "rbf",
        }
    }

    /// The learner in a few words, for descriptions.
    pub fn describe(self) -> &'static str {
        match self {
            LearnerKind::Ridge => "linear ridge-regression",
            LearnerKind::Knn => "nearest-neighbour",
            LearnerKind::Rbf => "radial-basis-function",
        }
    }

    /// The kind with a given short name.
    pub fn from_name(s: &str) -> Option<LearnerKind> {
        [LearnerKind::Ridge, LearnerKind::Knn, LearnerKind::Rbf]
            .into_iter()
            .find(|k| k.name() == s)
    }
}

/// Neighbours averaged by the k-nearest-neighbour learner.
pub const KNN_K: usize = 5;

/// A fitted study learner.
#[derive(Debug)]
pub enum Model {
    /// See [`LearnerKind::Ridge`].
    Ridge(Learner),
    /// See [`LearnerKind::Knn`].
    Knn(KnnLearner),
    /// See [`LearnerKind::Rbf`].
    Rbf(RbfLearner),
}

/// The demo spec's feature scales (the novelty model's and the review list's units).
pub fn spec_scales() -> Features {
    let spec = demo_spec();
    std::array::from_fn(|j| spec.features[j].scale.unwrap_or(1.0))
}

impl Model {
    /// Fits a learner of `kind` (row weights default to 1; the ridge learner takes the demo
    /// scenario's default penalty).
    pub fn fit(
        kind: LearnerKind,
        states: &[[f64; FEATURE_COUNT]],
        actions: &[Action],
        weights: Option<&[f64]>,
    ) -> Result<Arc<Model>, String> {
        let lambda = DemoConfig::default().lambda;
        Model::fit_one(kind, states, actions, weights, lambda).map(Arc::new)
    }

    /// Fits a learner of `kind`; `lambda` is the ridge learner's penalty (the others ignore it).
    pub fn fit_one(
        kind: LearnerKind,
        states: &[[f64; FEATURE_COUNT]],
        actions: &[Action],
        weights: Option<&[f64]>,
        lambda: f64,
    ) -> Result<Model, String> {
        let scale = spec_scales();
        Ok(match kind {
            LearnerKind::Ridge => Model::Ridge(
                Learner::fit(states, actions, weights, lambda).map_err(|e| e.to_string())?,
            ),
            LearnerKind::Knn => {
                Model::Knn(KnnLearner::fit(states, actions, weights, &scale, KNN_K)?)
            }
            LearnerKind::Rbf => Model::Rbf(RbfLearner::fit(
                states,
                actions,
                weights,
                &scale,
                &RbfSettings::default(),
            )?),
        })
    }

    /// The learner's action for a state.
    pub fn predict(&self, f: &Features) -> Action {
        match self {
            Model::Ridge(m) => m.predict(f),
            Model::Knn(m) => m.predict(f),
            Model::Rbf(m) => m.predict(f),
        }
    }
}

impl Policy for Model {
    fn act(&self, obs: &Observation<'_>) -> Action {
        match self {
            Model::Ridge(m) => m.act(obs),
            Model::Knn(m) => m.act(obs),
            Model::Rbf(m) => m.act(obs),
        }
    }
}
