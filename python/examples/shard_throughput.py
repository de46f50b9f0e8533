"""Measures what one scoring worker does: steps scored per second against a loaded model,
on one core and on every core of this machine, and the cost of loading the model.

    RAYON_NUM_THREADS=1 python python/examples/shard_throughput.py   # per core
    python python/examples/shard_throughput.py                       # every core

It copies the demo campaign to a temporary folder, writes a larger round made of the demo's
round 1 repeated with small offsets (``--steps``), builds ``analysis/model.bin`` and scores
the round in shards of ``--shard`` rows. Figures are medians of ``--repeat`` runs. Build the
module in release for meaningful numbers (``pip install ./python`` does).
"""

from __future__ import annotations

import argparse
import os
import shutil
import statistics
import tempfile
import time
from pathlib import Path

import numpy as np

import countersteer as cs

DEMO = Path(__file__).resolve().parents[2] / "demo-data"


def bigger_round(campaign: Path, steps: int) -> int:
    """Writes round 9: round 1 repeated with small state offsets until it holds `steps`."""
    r = cs.open_campaign(campaign).round(1)
    n = len(r["t"])
    reps = max(1, -(-steps // n))
    rng = np.random.default_rng(7)
    episodes, ts, states, actions = [], [], [], []
    for i in range(reps):
        episodes += [f"{e}-x{i}" for e in r["episode"]]
        ts.append(r["t"])
        states.append(r["states"] + rng.normal(0, 0.02, r["states"].shape).astype(np.float32))
        actions.append(r["actions"])
    cs.write_round(campaign, 9, "big", episodes, np.concatenate(ts), np.concatenate(states),
                   np.concatenate(actions))
    return reps * n


def median_time(f, repeat: int) -> float:
    times = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        f()
        times.append(time.perf_counter() - t0)
    return statistics.median(times)


def main():
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--steps", type=int, default=200_000)
    ap.add_argument("--shard", type=int, default=50_000)
    ap.add_argument("--repeat", type=int, default=3)
    a = ap.parse_args()
    threads = os.environ.get("RAYON_NUM_THREADS", str(os.cpu_count()))
    with tempfile.TemporaryDirectory() as tmp:
        camp = Path(tmp) / "campaign"
        shutil.copytree(DEMO, camp)
        n = bigger_round(camp, a.steps)
        t_build = median_time(lambda: cs.Model.build(camp), 1)
        t_load = median_time(lambda: cs.Model.load(camp), a.repeat)
        model = cs.Model.load(camp)
        cuts = list(range(0, n, a.shard)) + [n]

        def score_all():
            for x, y in zip(cuts, cuts[1:]):
                model.score_rows(9, x, y)

        t_score = median_time(score_all, a.repeat)
        demos = len(cs.open_campaign(camp).demonstrations()["t"])
    print(f"threads: {threads}; demonstration states: {demos}; round: {n} steps "
          f"in shards of {a.shard}")
    print(f"model build + save (once): {t_build:.2f} s; model load per worker: {t_load:.3f} s")
    print(f"scoring: {t_score:.2f} s = {n / t_score:,.0f} steps/s (median of {a.repeat})")


if __name__ == "__main__":
    main()
