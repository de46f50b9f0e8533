"""Score a round in shards on Ray, gather the per-step signals and plan on the driver.

Scoring is map-only over steps against a read-only novelty model, so a round too large for
one machine is cut into shards of consecutive rows. Ray Data hands the shards to a pool of
actors (``map_batches`` with a callable class); each actor loads the campaign's saved model
(``analysis/model.bin``) once and scores every shard it is given. The driver gathers the rows,
puts them in order, saves them as the round's ``scores.npz`` and plans the review list from
them, exactly as a single process would: each step's answer does not depend on where its
shard starts.

Every worker needs the campaign folder at the same path (a shared file system, or a copy);
a worker whose demonstrations differ from the model's refuses to score (StaleModelError).

    pip install ./python "ray[data]"
    countersteer demo my-campaign                  # or your own campaign
    python python/examples/ray_scoring.py my-campaign --round 1 --shards 8 --workers 2

Robots and vehicles can hurt people: a review list does not make a policy safe; test under
your local regulations and your site's safety procedures.
"""

from __future__ import annotations

import argparse
import os
import time

import numpy as np

import countersteer as cs

#: Per-step fields gathered from the workers (the per-round ones come from the model).
STEP_FIELDS = (
    "row", "t", "novelty", "p_value", "flagged", "contributions", "action_gap",
    "neighbour_action", "neighbour_spread", "ensemble_spread", "neighbours",
)


class ScoreShards:
    """A Ray Data actor: loads the model once, then scores every shard it is handed."""

    def __init__(self, campaign: str, round: int):
        self.model = cs.Model.load(campaign)
        self.round = round

    def __call__(self, batch):
        parts = [
            self.model.score_rows(self.round, int(a), int(b))
            for a, b in zip(batch["start"], batch["stop"])
        ]
        return {k: np.concatenate([p[k] for p in parts]) for k in STEP_FIELDS}


def shards(n_rows: int, n_shards: int):
    """``n_shards`` ranges of consecutive rows covering ``0..n_rows``."""
    cuts = np.linspace(0, n_rows, n_shards + 1).astype(int)
    return [{"start": int(a), "stop": int(b)} for a, b in zip(cuts, cuts[1:]) if b > a]


def score_with_ray(campaign, round: int, n_shards: int, workers: int):
    """Scores a round on Ray; returns the gathered scores (the ``scores.npz`` fields)."""
    import ray

    campaign = os.path.abspath(campaign)
    model = cs.Model.load(campaign)  # fails early, on the driver, when the model is stale
    n = len(cs.open_campaign(campaign).round(round)["t"])
    ds = ray.data.from_items(shards(n, n_shards))
    scored = ds.map_batches(
        ScoreShards,
        fn_constructor_kwargs={"campaign": campaign, "round": round},
        batch_size=1,
        batch_format="numpy",
        compute=ray.data.ActorPoolStrategy(size=workers),
        num_cpus=1,
        # One core per actor: the library's own thread pool would otherwise use them all.
        runtime_env={"env_vars": {"RAYON_NUM_THREADS": "1"}},
    )
    batches = list(scored.iter_batches(batch_size=None, batch_format="numpy"))
    out = {k: np.concatenate([np.asarray(b[k]) for b in batches]) for k in STEP_FIELDS}
    order = np.argsort(out["row"], kind="stable")
    out = {k: v[order] for k, v in out.items()}
    if not np.array_equal(out["row"], np.arange(n)):
        raise RuntimeError("the shards did not cover every row exactly once")
    out["threshold"] = np.array([model.threshold], dtype=np.float32)
    out["alpha"] = np.array([model.alpha], dtype=np.float64)
    out["scale"] = model.scale
    # The calibration phases and the scales' origins describe the round, not a row: take them
    # from one row scored on the driver.
    head = model.score_rows(round, 0, min(1, n))
    for k in ("phase_start", "phase_threshold", "scale_origin"):
        out[k] = np.asarray(head[k])
    return out


def main():
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("campaign")
    ap.add_argument("--round", type=int, required=True)
    ap.add_argument("--shards", type=int, default=8)
    ap.add_argument("--workers", type=int, default=2)
    ap.add_argument("--budget", type=int, default=50)
    ap.add_argument("--address", default=None, help="a running Ray cluster (default: start one here)")
    a = ap.parse_args()

    import ray

    ray.init(address=a.address, include_dashboard=False)
    if not os.path.exists(os.path.join(a.campaign, "analysis", "model.bin")):
        cs.Model.build(a.campaign)
        print("built analysis/model.bin")
    start = time.perf_counter()
    scores = score_with_ray(a.campaign, a.round, a.shards, a.workers)
    took = time.perf_counter() - start
    n = len(scores["row"])
    print(f"scored {n} steps in {a.shards} shards on {a.workers} workers: {took:.2f} s")
    print(f"flagged: {int(scores['flagged'].sum())} ({100 * scores['flagged'].mean():.1f}%)")
    cs.save_scores(a.campaign, a.round, scores)
    plan = cs.plan(a.campaign, a.round, budget=a.budget)
    print(f"review list: {len(plan['row'])} steps (analysis/{a.round}/review-list.jsonl)")
    for i in range(min(10, len(plan["row"]))):
        print(f"  {plan['episode'][i]:<24} t={plan['t'][i]:<6} {plan['reasons_joined'][i]}")
    print("caution:", cs.SAFETY_CAUTION)


if __name__ == "__main__":
    main()
