"""Scoring a round in shards on a local Ray instance equals scoring it in one process, and
the review list planned from the gathered scores is the same list."""

import importlib
import sys
from pathlib import Path

import numpy as np
import pytest

import countersteer as cs

ray = pytest.importorskip(
    "ray", reason="Ray is not installed (pip install 'ray[data]'); the Ray shard test is skipped"
)

EXAMPLES = Path(__file__).resolve().parents[1] / "examples"


def _example():
    if str(EXAMPLES) not in sys.path:
        sys.path.insert(0, str(EXAMPLES))
    return importlib.import_module("ray_scoring")


@pytest.fixture(scope="module")
def local_ray():
    # The workers import the example's actor class by module name, as the driver does.
    env = {"env_vars": {"PYTHONPATH": str(EXAMPLES)}}
    ray.init(num_cpus=2, include_dashboard=False, log_to_driver=False, runtime_env=env)
    yield
    ray.shutdown()


def test_ray_shards_equal_one_process(demo, local_ray):
    ex = _example()
    single = cs.score(demo, 1, save=True)
    plan_single = cs.plan(demo, 1, budget=40)
    cs.Model.build(demo)
    gathered = ex.score_with_ray(str(demo), 1, n_shards=7, workers=2)
    for k, v in single.items():
        if k == "episode":
            continue
        got = np.asarray(gathered[k])
        assert got.dtype == np.asarray(v).dtype, k
        assert got.tobytes() == np.asarray(v).tobytes(), k
    before = (demo / "analysis/1/scores.npz").read_bytes()
    cs.save_scores(demo, 1, gathered)
    assert (demo / "analysis/1/scores.npz").read_bytes() == before
    plan_ray = cs.plan(demo, 1, budget=40)
    for k in ("row", "t", "pick", "priority", "distance"):
        assert plan_ray[k].tobytes() == plan_single[k].tobytes(), k
    assert plan_ray["reasons"] == plan_single["reasons"]
