"""Fresh expert episodes scored as a round of a campaign holding the demonstrations: the
flagged share in the first 10 steps and after, per task (a quick check of the calibration)."""
import argparse, shutil, sys, tempfile
from pathlib import Path
import numpy as np
import run
from tasks import TASKS

p = argparse.ArgumentParser()
p.add_argument("tasks", nargs="+")
p.add_argument("--countersteer", required=True)
p.add_argument("--rollouts", type=int, default=60)
p.add_argument("--demos", type=int, default=None, help="demonstration episodes (default: the task's)")
a = p.parse_args()
for name in a.tasks:
    task = TASKS[name]
    n = a.demos or task.demos
    pool = run.Envs(task, max(a.rollouts, n))
    demos = pool.run(run.DEMO_SEED + np.arange(n), pool.expert)
    tmp = Path(tempfile.mkdtemp())
    ctx = dict(task=task, cfg=dict(rollouts=a.rollouts), pool=pool, exe=Path(a.countersteer).resolve(),
               out=tmp, demos=demos)
    f = run.fresh_flag_rates(ctx)
    print(f"{name} ({n} demonstrations): alpha {f['alpha']}, flagged {f['first10']:.3f} in the first 10 steps, "
          f"{f['rest']:.3f} after, {f['overall']:.3f} overall", flush=True)
    shutil.rmtree(tmp, ignore_errors=True)
