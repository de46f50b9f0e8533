"""Experts for the foreign-task benchmark, written here from published methods.

None of them is taken from an environment package: each is derived from the task's
equations of motion (read from the environment's documented dynamics) and the cited method.
Every expert maps a batch of observations (n, obs_dim) to a batch of actions (n, act_dim).
"""

import numpy as np


def dlqr(a, b, q, r, iters=5000, tol=1e-10):
    """Discrete-time LQR gain K (u = -K x) by iterating the Riccati difference equation
    to its fixed point (Kalman 1960; e.g. Anderson & Moore, Optimal Control, 1990, ch. 2)."""
    p = q.copy()
    for _ in range(iters):
        bp = b.T @ p
        k = np.linalg.solve(r + bp @ b, bp @ a)
        p_next = q + a.T @ p @ (a - b @ k)
        if np.max(np.abs(p_next - p)) < tol * max(1.0, np.max(np.abs(p))):
            p = p_next
            break
        p = p_next
    bp = b.T @ p
    return np.linalg.solve(r + bp @ b, bp @ a)


class PendulumSwingUp:
    """Pendulum-v1: energy-based swing-up with an LQR catch near the top.

    Swing-up: the energy-control idea of Astrom & Furuta (2000), "Swinging up a pendulum by
    energy control", Automatica 36(2): drive the pendulum's energy E to the upright energy E0
    with a Lyapunov function V = (E - E0)^2 / 2. With a torque at the pivot, dE/dt = u * w,
    so u = k (E0 - E) w (saturated) makes V decrease. Near the top, a discrete LQR on the
    linearisation of the environment's semi-implicit Euler step balances it.

    Model (Pendulum-v1's documented dynamics): th'' = 3 g / (2 l) sin th + 3 u / (m l^2),
    g = 10, m = l = 1, dt = 0.05, |u| <= 2, th = 0 upright.
    """

    g, m, l, dt, u_max = 10.0, 1.0, 1.0, 0.05, 2.0

    def __init__(self, k_energy=2.0, catch_angle=0.5):
        self.k_energy = k_energy
        self.catch_angle = catch_angle
        a_c = 3 * self.g / (2 * self.l)
        b_c = 3 / (self.m * self.l**2)
        # Semi-implicit Euler: w' = w + dt (a_c th + b_c u); th' = th + dt w'.
        a = np.array([[1 + self.dt**2 * a_c, self.dt], [self.dt * a_c, 1.0]])
        b = np.array([[self.dt**2 * b_c], [self.dt * b_c]])
        self.k_lqr = dlqr(a, b, np.diag([10.0, 1.0]), np.array([[0.1]]))

    def energy(self, th, w):
        inertia = self.m * self.l**2 / 3
        return 0.5 * inertia * w**2 + self.m * self.g * self.l / 2 * (np.cos(th) - 1)

    def __call__(self, obs):
        th = np.arctan2(obs[:, 1], obs[:, 0])
        w = obs[:, 2]
        pump = self.k_energy * (0.0 - self.energy(th, w)) * w
        # At rest at the bottom, w = 0 gives no pumping: start with a push.
        pump = np.where(np.abs(w) < 1e-3, self.u_max, pump)
        lqr = -(self.k_lqr @ np.stack([th, w]))[0]
        u = np.where(np.abs(th) < self.catch_angle, lqr, pump)
        return np.clip(u, -self.u_max, self.u_max)[:, None]


class MountainCarPump:
    """MountainCarContinuous-v0: energy pumping, push along the velocity.

    The car's mechanical energy E = v^2 / 2 + g_eff h(x) grows at the rate of the engine's
    power u v (the environment's dynamics: v' = v + 0.0015 u - 0.0025 cos 3x), so full force
    along the velocity, u = sign(v), adds energy as fast as the engine allows: the bang-bang
    energy-pumping law (Astrom & Furuta 2000 use the same sign(velocity) structure for the
    pendulum's swing-up; it is the standard solution of this task, e.g. Sutton & Barto,
    Reinforcement Learning, 2nd ed. 2018, sec. 10.1, describe why pumping is needed).
    At rest (v = 0) the car first rolls left, away from the goal, to gain a run-up.
    """

    def __call__(self, obs):
        v = obs[:, 1]
        u = np.where(v > 0, 1.0, -1.0)
        return u[:, None]


class DoublePendulumLQR:
    """InvertedDoublePendulum-v5: LQR on a finite-difference linearisation of the MuJoCo model.

    One environment step of the MuJoCo model (its frame skip of integrator steps, the control
    held) is linearised about the upright equilibrium by centred finite differences, and a
    discrete LQR gain is computed (Kalman 1960; the standard linear-quadratic regulator
    for cart-pole systems, e.g. Astrom & Murray, Feedback Systems, 2nd ed. 2021, sec. 7.5).

    State x = (cart position, hinge angles th1, th2, their velocities), read from the
    observation (th from its sine and cosine; velocities as observed).
    """

    def __init__(self, env):
        import mujoco

        u = env.unwrapped
        model = u.model
        data = mujoco.MjData(model)
        nq, nv = model.nq, model.nv

        def step(x, ctrl):
            """One environment step (frame_skip MuJoCo steps, the control held) from x."""
            mujoco.mj_resetData(model, data)
            data.qpos[:] = x[:nq]
            data.qvel[:] = x[nq:]
            data.ctrl[:] = ctrl
            mujoco.mj_step(model, data, nstep=u.frame_skip)
            return np.concatenate([data.qpos, data.qvel])

        # Centred finite differences about the upright rest state (the model's integrator,
        # RK4, is not covered by mjd_transitionFD, so the differences are taken here).
        x0, u0, h = np.zeros(nq + nv), np.zeros(model.nu), 1e-6
        a_n = np.stack(
            [(step(x0 + h * e, u0) - step(x0 - h * e, u0)) / (2 * h) for e in np.eye(nq + nv)],
            axis=1,
        )
        b_n = np.stack(
            [(step(x0, u0 + h * e) - step(x0, u0 - h * e)) / (2 * h) for e in np.eye(model.nu)],
            axis=1,
        )
        q = np.diag([1.0, 20.0, 20.0, 0.1, 1.0, 1.0])
        self.k = dlqr(a_n, b_n, q, np.array([[1.0]]))

    def __call__(self, obs):
        th = np.arctan2(obs[:, 1:3], obs[:, 3:5])
        x = np.concatenate([obs[:, :1], th, obs[:, 5:8]], axis=1)
        u = -(x @ self.k.T)
        return np.clip(u, -1.0, 1.0)
