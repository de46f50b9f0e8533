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
    batch: object = None  # lockstep NumPy copy of the environment's step, or None

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


class PendulumBatch:
    """Pendulum-v1's step equations (gymnasium's PendulumEnv.step) for many episodes at once."""

    g, m, l, dt, max_speed, max_torque = 10.0, 1.0, 1.0, 0.05, 8.0, 2.0

    def state(self, env):
        return np.array(env.state, dtype=np.float64)

    def obs(self, s):
        return np.stack([np.cos(s[:, 0]), np.sin(s[:, 0]), s[:, 1]], axis=1).astype(np.float32)

    def step(self, s, u):
        th, w = s[:, 0], s[:, 1]
        u = np.clip(u[:, 0], -self.max_torque, self.max_torque)
        cost = (((th + np.pi) % (2 * np.pi)) - np.pi) ** 2 + 0.1 * w**2 + 0.001 * u**2
        w2 = w + (3 * self.g / (2 * self.l) * np.sin(th) + 3.0 / (self.m * self.l**2) * u) * self.dt
        w2 = np.clip(w2, -self.max_speed, self.max_speed)
        s2 = np.stack([th + w2 * self.dt, w2], axis=1)
        return s2, -cost, np.zeros(len(s), dtype=bool)


class CarBatch:
    """MountainCarContinuous-v0's step equations (gymnasium's Continuous_MountainCarEnv.step)
    for many episodes at once; the state is kept in float32 as the environment keeps it."""

    power, max_speed, min_pos, max_pos, goal = 0.0015, 0.07, -1.2, 0.6, 0.45

    def state(self, env):
        return np.array(env.state, dtype=np.float64)

    def obs(self, s):
        return s.astype(np.float32)

    def step(self, s, u):
        force = np.clip(u[:, 0].astype(np.float32), -1.0, 1.0).astype(np.float64)
        pos, v = s[:, 0], s[:, 1]
        v = np.clip(v + force * self.power - 0.0025 * np.cos(3 * pos), -self.max_speed, self.max_speed)
        pos = np.clip(pos + v, self.min_pos, self.max_pos)
        v = np.where((pos == self.min_pos) & (v < 0), 0.0, v)
        done = pos >= self.goal
        reward = np.where(done, 100.0, 0.0) - 0.1 * force**2
        s2 = np.stack([pos, v], axis=1).astype(np.float32).astype(np.float64)
        return s2, reward, done


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
        batch=PendulumBatch(),
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
        batch=CarBatch(),
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


def rollout(task, envs, seeds, policy, batch=True):
    """Runs one episode per seed with `policy` (obs batch -> action batch), all episodes
    stepped together and the policy asked once per step for every live episode. Episodes
    start from the environment's own reset; with `batch` and a task that has one, they are
    stepped by its NumPy copy of the environment's equations (see `check_batch`)."""
    n = len(seeds)
    obs = np.stack([envs[i].reset(seed=int(s))[0] for i, s in enumerate(seeds)]).astype(np.float64)
    batch = task.batch if batch else None
    if batch is not None:
        state = np.stack([batch.state(envs[i]) for i in range(n)])
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
        if batch is not None:
            state[idx], r, term = task.batch.step(state[idx], act)
            obs[idx] = task.batch.obs(state[idx])
            returns[idx] += r
            steps[idx] += 1
            terminated[idx] |= term
            alive[idx] &= ~term
            continue
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


def check_batch(task, envs, policy, seeds):
    """Runs the same episodes through the environment itself and through the task's NumPy
    copy of its step; returns the largest state difference and whether every success agrees.
    The benchmark refuses to run when they differ."""
    a = rollout(task, envs, seeds, policy, batch=False)
    b = rollout(task, envs, seeds, policy, batch=True)
    if a.states.shape != b.states.shape:
        return np.inf, False
    return float(np.max(np.abs(a.states - b.states))), bool((a.success == b.success).all())
