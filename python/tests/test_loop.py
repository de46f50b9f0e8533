"""The whole loop from Python (write round -> score -> plan -> bulk-correct -> export -> load),
compared byte for byte with the countersteer command's files on the same inputs.

The reference is the command line (a separate program reading the same files) and numpy's
own reader of what both wrote (``numpy.load``).
"""

import json
import shutil

import numpy as np

import countersteer as cs


def _ledger_without_time(path):
    """Ledger records with the wall-clock time left out (the only field that must differ)."""
    out = []
    for line in path.read_text().splitlines():
        rec = json.loads(line)
        rec.pop("time")
        out.append(rec)
    return out


def _batch_csv(path, rows):
    lines = ["round,episode,t,steer,accel"]
    lines += [f"{r},{e},{t},{s!r},{a!r}" for r, e, t, s, a in rows]
    path.write_text("\n".join(lines) + "\n")


def test_full_loop_equals_the_command_line(twin, cli, tmp_path):
    a, b = twin
    # 1. Write a round from numpy arrays (round 2's steps, moved a little: a new rollout).
    src = cs.open_campaign(b).round(2)
    states = src["states"].copy()
    states[:, 0] += np.float32(0.05)
    path = cs.write_round(b, 3, "fleet", src["episode"], src["t"], states, src["actions"],
                          src.get("intervention"))
    assert path.endswith("rounds/3/fleet.npz")
    (a / "rounds" / "3").mkdir()
    shutil.copyfile(path, a / "rounds" / "3" / "fleet.npz")
    cli("check", a)
    back = cs.open_campaign(b).round(3)
    assert np.array_equal(back["states"], states)
    assert np.array_equal(back["t"], src["t"]) and list(back["episode"]) == list(src["episode"])

    # 2. Score: the same scores.npz, and the dict holds what numpy reads from it.
    cli("score", a, "--round", 3)
    got = cs.score(b, 3)
    rel = "analysis/3/scores.npz"
    assert (a / rel).read_bytes() == (b / rel).read_bytes()
    with np.load(a / rel) as ref:
        # The file also holds its key and checksum (which model and data made it).
        assert set(got) <= set(ref.files)
        for k in got:
            assert np.array_equal(ref[k], got[k], equal_nan=k == "ensemble_spread"), k
            assert ref[k].dtype == got[k].dtype, k

    # 3. Plan: the same review list.
    cli("plan", a, "--round", 3, "--budget", 15)
    plan = cs.plan(b, 3, budget=15)
    rel = "analysis/3/review-list.jsonl"
    assert (a / rel).read_bytes() == (b / rel).read_bytes()
    listed = [json.loads(x) for x in (a / rel).read_text().splitlines()]
    assert [x["t"] for x in listed] == plan["t"].tolist()
    assert [x["episode"] for x in listed] == plan["episode"].tolist()
    assert [x["reasons"] for x in listed] == plan["reasons"]
    assert len(listed) == 15

    # 4. Bulk corrections by two annotators: the same ledger records (time aside).
    gap = got["neighbour_action"][plan["row"]]
    quarter = np.round(gap * 64) / 64  # exact in float32 and in decimal text
    for who, shift in (("ana", 0.0), ("ben", 0.125)):
        acts = np.clip(quarter + np.float32(shift), [-0.5, -2.0], [0.5, 1.5]).astype(np.float32)
        rows = [(3, e, int(t), float(s), float(x))
                for e, t, (s, x) in zip(plan["episode"], plan["t"], acts)]
        _batch_csv(tmp_path / f"{who}.csv", rows)
        cli("correct", a, "--annotator", who, "--from", tmp_path / f"{who}.csv")
        seqs = cs.correct(b, who, 3, plan["episode"], plan["t"], "action", actions=acts)
        assert seqs.tolist() == list(range(1, 16))
        rel = f"ledgers/{who}.jsonl"
        assert _ledger_without_time(a / rel) == _ledger_without_time(b / rel)

    # Tally: the consensus of two continuous actions is their mean (the spec's rule for
    # continuous channels; checked with numpy).
    t = cs.tally(b)
    assert len(t["row"]) == 15
    order = np.argsort(plan["row"])
    want = (quarter + np.clip(quarter + np.float32(0.125), [-0.5, -2.0], [0.5, 1.5])) / 2
    assert np.allclose(t["action"], want[order], atol=1e-6)

    # 5. Export: the same merged set in every format.
    for ext in ("npz", "jsonl", "csv"):
        rel = f"exports/set.{ext}"
        cli("export", a, "--out", a / rel)
        manifest = cs.export(b, b / rel)
        assert (a / rel).read_bytes() == (b / rel).read_bytes(), ext
        assert manifest["rows"]["correction"] == 15
        assert manifest["safety"] == cs.SAFETY_CAUTION

    # 6. Load: the merged set as arrays equals numpy's reading of the command's file.
    m = cs.load_merged(b / "exports/set.npz", b)
    with np.load(a / "exports/set.npz") as ref:
        for k in ref.files:
            assert np.array_equal(ref[k], m[k], equal_nan=k == "agreement"), k
    assert np.array_equal(cs.load_merged(b / "exports/set.jsonl", b)["states"], m["states"])
