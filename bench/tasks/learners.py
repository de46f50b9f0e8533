"""Learners, refit from scratch on all labelled data each round.

- knn: 1-nearest-neighbour regression on standardised states (a local learner);
- mlp: scikit-learn MLPRegressor, one hidden layer of 16 units, fixed random_state
  (a global learner);
- rbf: ridge regression on Gaussian radial basis features (random Fourier features,
  Rahimi & Recht 2007, "Random features for large-scale kernel machines"), standardised states.

`fit(name, states, actions, weights)` returns a policy (obs batch -> action batch). With
weights (inverse inclusion probabilities of the export's `weight` column) the MLP and the ridge
learner weigh their loss; 1-nearest-neighbour has no loss to weigh and ignores them.
"""

import numpy as np
from sklearn.linear_model import Ridge
from sklearn.neighbors import KNeighborsRegressor
from sklearn.neural_network import MLPRegressor
from sklearn.preprocessing import StandardScaler

LEARNERS = ("knn", "mlp", "rbf")


class _Scaled:
    def __init__(self, scaler, model, out_dim):
        self.scaler, self.model, self.out_dim = scaler, model, out_dim

    def __call__(self, obs):
        return np.asarray(self.model.predict(self.scaler.transform(obs))).reshape(len(obs), -1)


class _Rbf:
    def __init__(self, scaler, w, b, ridge):
        self.scaler, self.w, self.b, self.ridge = scaler, w, b, ridge

    def features(self, x):
        z = self.scaler.transform(x)
        return np.sqrt(2.0 / self.w.shape[1]) * np.cos(z @ self.w + self.b)

    def __call__(self, obs):
        return np.asarray(self.ridge.predict(self.features(obs))).reshape(len(obs), -1)


def fit(name, states, actions, weights=None):
    scaler = StandardScaler().fit(states)
    z = scaler.transform(states)
    y = actions if actions.shape[1] > 1 else actions[:, 0]
    if name == "knn":
        return _Scaled(scaler, KNeighborsRegressor(n_neighbors=1).fit(z, y), actions.shape[1])
    if name == "mlp":
        m = MLPRegressor(hidden_layer_sizes=(16,), solver="lbfgs", max_iter=1000, random_state=0)
        m.fit(z, y, sample_weight=weights)
        return _Scaled(scaler, m, actions.shape[1])
    if name == "rbf":
        rng = np.random.default_rng(0)
        d, n_feat, bandwidth = states.shape[1], 300, 0.5
        w = rng.normal(0.0, 1.0 / bandwidth, size=(d, n_feat))
        b = rng.uniform(0.0, 2 * np.pi, size=n_feat)
        pol = _Rbf(scaler, w, b, None)
        pol.ridge = Ridge(alpha=1e-3).fit(pol.features(states), y, sample_weight=weights)
        return pol
    raise ValueError(f"unknown learner {name}")
