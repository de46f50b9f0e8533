"""The benchmark's tasks: environment, expert, spec, horizon, success, and lockstep rollouts."""

from dataclasses import dataclass
from typing import Callable

import gymnasium as gym
import numpy as np

from experts import DoublePendulumLQR, MountainCarPump, PendulumSwingUp


@dataclass
class Task:
    """One environment with its expert and the benchmark's choices for it."""

    name: str
    env_id: str
    horizon: int  # steps per episode (rollouts and evaluation)
    demos: int  # expert demonstration episodes
    features: list  # (name, unit) per observation entry
    channels: list  # (name, unit, low, high) per action entry
    make_expert: Callable  # env -> expert(obs batch) -> action batch
    success_text: str
    success: Callable  # (obs history (T, n, d), terminated (n,), steps (n,)) -> bool (n,)

    def make_env(self):
        # The bare environment: the benchmark keeps its own horizon, and the wrappers'
        # per-step checks would cost more than the dynamics.
        return gym.make(self.env_id).unwrapped

    def spec(self):
        return {
            "features": [{"name": n, "unit": u} for n, u in self.features],
            "actions": [
                {"name": n, "unit": u, "low": lo, "high": hi} for n, u, lo, hi in self.channels
            ],
        }

    def clip(self, actions):
        lo = np.array([c[2] for c in self.channels])
        hi = np.array([c[3] for c in self.channels])
        return np.clip(actions, lo, hi)


def _pendulum_success(hist, terminated, steps):
    # Upright (|angle| < 0.3 rad) through each of the last 50 steps.
    th = np.arctan2(hist[-50:, :, 1], hist[-50:, :, 0])
    return (np.abs(th) < 0.3).all(axis=0)


def _car_success(hist, terminated, steps):
    return terminated  # the environment ends an episode when the car reaches the flag


def _double_success(hist, terminated, steps):
    return ~terminated  # never fell (the environment ends an episode when the tip drops)


TASKS = {
    "pendulum": Task(
        name="pendulum",
        env_id="Pendulum-v1",
        horizon=200,
        demos=10,
        features=[("cos_angle", ""), ("sin_angle", ""), ("angular_velocity", "rad/s")],
        channels=[("torque", "N m", -2.0, 2.0)],
        make_expert=lambda env: PendulumSwingUp(),
        success_text="upright (|angle| < 0.3 rad) in each of the last 50 of 200 steps",
        success=_pendulum_success,
    ),
    "mountaincar": Task(
        name="mountaincar",
        env_id="MountainCarContinuous-v0",
        horizon=300,
        demos=5,
        features=[("position", "m"), ("velocity", "m/step")],
        channels=[("force", "", -1.0, 1.0)],
        make_expert=lambda env: MountainCarPump(),
        success_text="the car reaches the flag (position >= 0.45) within 300 steps",
        success=_car_success,
    ),
    "doublependulum": Task(
        name="doublependulum",
        env_id="InvertedDoublePendulum-v5",
        horizon=300,
        demos=10,
        features=[
            ("cart_x", "m"),
            ("sin_hinge1", ""),
            ("sin_hinge2", ""),
            ("cos_hinge1", ""),
            ("cos_hinge2", ""),
            ("cart_v", "m/s"),
            ("hinge1_w", "rad/s"),
            ("hinge2_w", "rad/s"),
            ("constraint", ""),
        ],
        channels=[("push", "", -1.0, 1.0)],
        make_expert=DoublePendulumLQR,
        success_text="the poles stay up (no termination) for 300 steps",
        success=_double_success,
    ),
}


@dataclass
class Rollouts:
    """Episodes stepped in lockstep: the visited states with the policy's actions."""

    states: np.ndarray  # (steps, d) float32
    actions: np.ndarray  # (steps, a) float32, the acting policy's
    episode: np.ndarray  # (steps,) int, index into the seeds
    t: np.ndarray  # (steps,) int64
    success: np.ndarray  # (episodes,) bool
    returns: np.ndarray  # (episodes,) float


def rollout(task, envs, seeds, policy):
    """Runs one episode per seed with `policy` (obs batch -> action batch), all episodes
    stepped together and the policy asked once per step for every live episode."""
    n = len(seeds)
    obs = np.stack([envs[i].reset(seed=int(s))[0] for i, s in enumerate(seeds)]).astype(np.float64)
    alive = np.ones(n, dtype=bool)
    terminated = np.zeros(n, dtype=bool)
    returns = np.zeros(n)
    steps = np.zeros(n, dtype=int)
    hist = np.zeros((task.horizon, n, obs.shape[1]))
    out_s, out_a, out_e, out_t = [], [], [], []
    for t in range(task.horizon):
        hist[t] = obs
        idx = np.flatnonzero(alive)
        if idx.size == 0:
            hist[t:] = obs
            break
        act = task.clip(np.asarray(policy(obs[idx]), dtype=np.float64).reshape(idx.size, -1))
        out_s.append(obs[idx].copy())
        out_a.append(act)
        out_e.append(idx)
        out_t.append(np.full(idx.size, t))
        for j, i in enumerate(idx):
            o, r, term, trunc, _ = envs[i].step(act[j].astype(np.float32))
            obs[i] = o
            returns[i] += r
            steps[i] += 1
            if term:
                terminated[i] = True
            if term or trunc:
                alive[i] = False
    states = np.concatenate(out_s)
    order = np.lexsort((np.concatenate(out_t), np.concatenate(out_e)))
    return Rollouts(
        states=states[order].astype(np.float32),
        actions=np.concatenate(out_a)[order].astype(np.float32),
        episode=np.concatenate(out_e)[order],
        t=np.concatenate(out_t)[order].astype(np.int64),
        success=task.success(hist, terminated, steps),
        returns=returns,
    )
