"""The countersteer side of the loop: a campaign folder per run, driven through the CLI.

Every label goes through countersteer: rounds are written as `.npz` step files, scored and
planned by `countersteer score` / `plan`, the expert's labels are applied with one
`countersteer correct --from FILE` per round, and the learner is refit from
`countersteer export`'s merged set.
"""

import csv
import json
import os
import subprocess
from pathlib import Path

import numpy as np

ANNOTATOR = "expert"


class CountersteerError(RuntimeError):
    pass


class Campaign:
    def __init__(self, exe, root, task):
        self.exe, self.root, self.task = str(exe), Path(root), task

    def cs(self, *args):
        """Runs one countersteer subcommand; returns its standard output."""
        env = dict(os.environ, COUNTERSTEER_ANNOTATOR=ANNOTATOR)
        p = subprocess.run(
            [self.exe, *map(str, args)], capture_output=True, text=True, env=env
        )
        if p.returncode != 0:
            raise CountersteerError(
                f"countersteer {' '.join(map(str, args))} failed ({p.returncode}):\n{p.stderr}"
            )
        return p.stdout

    def create(self, demos, name):
        """Writes campaign.json and the demonstrations (a Rollouts of the expert)."""
        self.root.mkdir(parents=True, exist_ok=True)
        (self.root / "campaign.json").write_text(
            json.dumps({"name": name, "spec": self.task.spec()}, indent=2)
        )
        self._write_steps(self.root / "demonstrations" / "expert.npz", demos, "demo")

    def _write_steps(self, path, r, prefix):
        path.parent.mkdir(parents=True, exist_ok=True)
        names = np.array([f"{prefix}-{e:03d}" for e in r.episode])
        tmp = path.with_suffix(".partial.npz")
        np.savez(tmp, states=r.states, actions=r.actions, episode=names, t=r.t)
        tmp.replace(path)

    def write_round(self, k, r):
        self._write_steps(self.root / "rounds" / str(k) / "rollouts.npz", r, f"r{k}")
        return np.array([f"r{k}-{e:03d}" for e in r.episode])

    def score(self, k):
        self.cs("score", self.root, "--round", k)
        with np.load(self.root / "analysis" / str(k) / "scores.npz") as z:
            return {key: z[key] for key in z.files}

    def plan(self, k, budget, *extra):
        """The review list's (episode, t) pairs, in rank order (`extra`: more plan options)."""
        self.cs("plan", self.root, "--round", k, "--budget", budget, *extra)
        path = self.root / "analysis" / str(k) / "review-list.jsonl"
        rows = [json.loads(line) for line in path.read_text().splitlines() if line.strip()]
        return [(r["episode"], int(r["t"])) for r in rows]

    def correct(self, k, episodes, ts, actions):
        """Applies the expert's actions to steps of round k with one bulk call."""
        path = self.root / "labels" / f"round-{k}.csv"
        path.parent.mkdir(parents=True, exist_ok=True)
        names = [c[0] for c in self.task.channels]
        with open(path, "w", newline="") as f:
            w = csv.writer(f)
            w.writerow(["round", "episode", "t", *names])
            for e, t, a in zip(episodes, ts, actions):
                w.writerow([k, e, int(t), *(repr(float(v)) for v in a)])
        return self.cs("correct", self.root, "--annotator", ANNOTATOR, "--from", path)

    def export(self, k):
        """The merged set after round k: states, actions and, when present, weights."""
        out = self.root / "exports" / f"after-round-{k}.npz"
        self.cs("export", self.root, "--out", out)
        with np.load(out) as z:
            data = {key: z[key] for key in z.files}
        return data
