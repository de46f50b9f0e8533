"""The module's calls one by one: reading a campaign, typed errors with file, line and field,
the saved model and its shards, the interpreter released during long work."""

import threading
import time

import numpy as np
import pytest

import countersteer as cs


def test_a_campaign_reads_as_its_files_say(demo):
    c = cs.open_campaign(demo)
    assert c.rounds == [1, 2]
    assert [f["name"] for f in c.spec["features"]][:2] == ["lateral_offset", "heading_error"]
    assert c.novelty == {"k": 5, "alpha": 0.05}
    r2 = c.round(2)
    # Round 2 is also stored as CSV beside the .npz; numpy reads the .npz itself.
    with np.load(demo / "rounds/2/takeover.npz") as ref:
        n = len(ref["t"])
        assert np.array_equal(r2["states"][-n:], ref["states"].astype(np.float32))
        assert list(r2["episode"][-n:]) == list(ref["episode"])
    assert r2["states"].dtype == np.float32 and r2["states"].shape[1] == 7
    assert r2["intervention"].dtype == np.bool_


def test_bad_arrays_raise_with_record_and_field(demo):
    c = cs.open_campaign(demo)
    r = c.round(2)
    states = r["states"][:20].copy()
    states[7, 2] = np.nan
    with pytest.raises(cs.CampaignError) as e:
        cs.write_round(demo, 3, "bad", r["episode"][:20], r["t"][:20], states, r["actions"][:20])
    err = e.value
    assert err.file.endswith("rounds/3/bad.npz")
    assert err.line == 7
    assert "state" in err.field
    assert not (demo / "rounds/3/bad.npz").exists()
    # Wrong width is named by its array.
    with pytest.raises(cs.CampaignError) as e:
        cs.write_round(demo, 3, "bad", r["episode"][:20], r["t"][:20], states[:, :3], r["actions"][:20])
    assert e.value.field == "states"


def test_a_saved_round_file_is_never_replaced(demo):
    r = cs.open_campaign(demo).round(2)
    args = (r["episode"][:50], r["t"][:50], r["states"][:50], r["actions"][:50])
    p = cs.write_round(demo, 4, "once", *args)
    before = open(p, "rb").read()
    with pytest.raises(cs.CampaignError) as e:
        cs.write_round(demo, 4, "once", *args)
    assert "never replaced" in str(e.value)
    assert open(p, "rb").read() == before


def test_a_bad_batch_writes_nothing_and_names_every_line(demo):
    r = cs.open_campaign(demo).round(1)
    ep, t = r["episode"][:3], r["t"][:3]
    acts = np.array([[0.1, 0.0], [0.9, 0.0], [0.0, 0.0]], dtype=np.float32)  # 0.9 > steer high
    ep = list(ep)
    ep[2] = "no-such-episode"
    with pytest.raises(cs.LedgerError) as e:
        cs.correct(demo, "ana", 1, ep, t, "action", actions=acts)
    lines = sorted(p["line"] for p in e.value.problems)
    assert lines == [2, 3]
    assert e.value.line == 2 and e.value.field == "steer"
    assert not (demo / "ledgers/ana.jsonl").exists() or (demo / "ledgers/ana.jsonl").read_text() == ""


def test_a_saved_model_scores_shards_exactly_and_refuses_new_demonstrations(demo):
    whole = cs.score(demo, 1, save=False)
    model = cs.Model.build(demo)
    assert (demo / "analysis/model.bin").exists()
    loaded = cs.Model.load(demo)
    assert loaded.fingerprint == model.fingerprint and loaded.threshold == whole["threshold"][0]
    n = len(whole["t"])
    cuts = [0, 1, 333, 512, 513, n // 2, n - 1, n]
    parts = [loaded.score_rows(1, x, y) for x, y in zip(cuts, cuts[1:])]
    joined = cs.concat_scores(parts)
    for k, v in whole.items():
        if k == "episode":
            assert list(joined[k]) == list(v)
        else:
            assert joined[k].dtype == v.dtype, k
            assert joined[k].tobytes() == v.tobytes(), k
    # Arrays from elsewhere score the same as the rows they hold.
    r = cs.open_campaign(demo).round(1)
    part = loaded.score_arrays(r["episode"][100:900], r["t"][100:900], r["states"][100:900],
                               r["actions"][100:900])
    assert part["novelty"].tobytes() == whole["novelty"][100:900].tobytes()
    assert part["neighbours"].tobytes() == whole["neighbours"][100:900].tobytes()
    # Changed demonstrations: the model refuses, naming the file and what changed.
    demo_file = demo / "demonstrations/expert.jsonl"
    lines = demo_file.read_text().splitlines()
    demo_file.write_text("\n".join(lines[:-1]) + "\n")
    with pytest.raises(cs.StaleModelError) as e:
        cs.Model.load(demo)
    assert e.value.file.endswith("analysis/model.bin")
    assert e.value.field == "demonstrations"
    assert "build the model again" in str(e.value)
    assert isinstance(e.value, cs.CountersteerError)


def test_scoring_releases_the_interpreter(demo):
    ticks = []
    done = threading.Event()

    def tick():
        while not done.is_set():
            ticks.append(time.perf_counter())
            time.sleep(0.001)

    th = threading.Thread(target=tick)
    th.start()
    try:
        start = time.perf_counter()
        cs.score(demo, 1, save=False)
        end = time.perf_counter()
    finally:
        done.set()
        th.join()
    during = [x for x in ticks if start < x < end]
    # With the interpreter held, the other thread could not run at all during the call.
    assert len(during) >= 3, f"{len(during)} ticks during a {end - start:.3f} s call"


def test_the_torch_adapter_needs_torch_only_when_used(demo):
    import importlib
    import sys

    mod = importlib.import_module("countersteer.torch")
    assert "torch" not in sys.modules or sys.modules["torch"] is not None
    try:
        import torch  # noqa: F401
    except ImportError:
        with pytest.raises(ImportError, match="needs PyTorch"):
            mod.MergedDataset  # noqa: B018
        return
    cs.export(demo, demo / "exports/set.npz")
    ds = mod.MergedDataset(demo / "exports/set.npz", demo)
    state, action, weight = ds[0]
    assert state.shape == (7,) and action.shape == (2,) and float(weight) == 1.0
