"""External-task label-efficiency benchmark: one command per task.

    nice -n 5 .venv/bin/python run.py pendulum [--quick] [--countersteer PATH]

See README.md for the protocol's choices and the safety caution.
"""

import argparse
import shutil
import sys
import time
from pathlib import Path

import numpy as np

import learners
import report
from campaign import Campaign
from tasks import TASKS, check_batch, rollout


CAUTION = (
    "A learner that does well here is not thereby safe on a machine. " + """Robots and vehicles can hurt people. Corrected data does not make a policy safe: a policy trained on it can still fail in ways no review caught. Collecting the next round means running an unproven learner on real hardware: test it in simulation first, have a trained safety operator ready to take over at once, use a tested emergency stop, run at reduced speed, and keep people out of the area. The flags and the review list are not a safety monitor: a step that was not flagged is not thereby safe. Typed corrections were never executed and may not be physically feasible. Local regulations and your site's safety procedures come first: test robots and vehicles under them, with the safeguards they require."""
)

# Seed blocks, disjoint: demonstrations, round k's rollouts, evaluation, fresh expert episodes.
DEMO_SEED, ROLLOUT_SEED, EVAL_SEED, FRESH_SEED = 10_000, 20_000, 50_000, 90_000


def settings(args):
    if args.quick:
        return dict(demos=args.demos or TASKS[args.task].demos, rollouts=15, rounds=2, evals=40, random_seeds=2,
                    budgets=[0.05], learners=args.learners or ["knn"], replicates=1)
    return dict(demos=args.demos or TASKS[args.task].demos, rollouts=args.rollouts, rounds=args.rounds, evals=args.evals,
                random_seeds=args.random_seeds, budgets=args.budgets, replicates=args.replicates,
                learners=args.learners or list(learners.LEARNERS))


class Envs:
    """A pool of environments reused for every lockstep rollout."""

    def __init__(self, task, n):
        self.task = task
        self.envs = [task.make_env() for _ in range(n)]
        self.expert = task.make_expert(self.envs[0])

    def run(self, seeds, policy):
        return rollout(self.task, self.envs[: len(seeds)], seeds, policy)


def choose(strategy, camp, k, r, names, budget, sel_seed, replicate):
    """Rows of round k chosen by a strategy for labelling."""
    n = len(r.t)
    if strategy == "dagger":
        return np.arange(n)
    if strategy == "random":
        rng = np.random.default_rng([sel_seed, k] + ([replicate] if replicate else []))
        return np.sort(rng.choice(n, size=min(budget, n), replace=False))
    if strategy == "novelty":
        s = camp.score(k)
        return np.argsort(-s["novelty"], kind="stable")[:budget]
    if strategy == "review" or strategy.startswith("review-s"):
        camp.score(k)
        row = {(e, int(t)): i for i, (e, t) in enumerate(zip(names, r.t))}
        extra = [] if strategy == "review" else ["--sample-share", int(strategy[8:]) / 100]
        extra += ["--seed", replicate]
        return np.array([row[p] for p in camp.plan(k, budget, *extra)], dtype=int)
    raise ValueError(strategy)


def one_run(ctx, learner, strategy, frac, sel_seed, round0):
    """Rounds 1..R of one (learner, strategy, budget, selection seed) in the context's
    replicate; per-episode rows."""
    task, cfg, pool, rep_ = ctx["task"], ctx["cfg"], ctx["pool"], ctx["replicate"]
    tag = f"{learner}-{strategy}-{frac if strategy != 'dagger' else 'all'}-s{sel_seed}-r{rep_}"
    camp = Campaign(ctx["exe"], ctx["out"] / "campaigns" / tag, task)
    camp.create(ctx["demos"], f"{task.name} {tag}")
    policy, labels, rows = round0, 0, []
    for k in range(1, cfg["rounds"] + 1):
        seeds = ROLLOUT_SEED + 1000 * k + 100 * rep_ + np.arange(cfg["rollouts"])
        r = pool.run(seeds, policy)
        names = camp.write_round(k, r)
        budget = max(1, int(round(frac * len(r.t))))
        picked = choose(strategy, camp, k, r, names, budget, sel_seed, rep_)
        labels += len(picked)
        camp.correct(k, names[picked], r.t[picked], pool.expert(r.states[picked].astype(float)))
        merged = camp.export(k)
        weights = merged.get("weight") if ctx["use_weights"] else None
        policy = learners.fit(learner, merged["states"].astype(float),
                              merged["actions"].astype(float), weights)
        ev = pool.run(ctx["eval_seeds"], policy)
        rows += outcome_rows(ev, learner, strategy, frac, sel_seed, k, labels, ctx["eval_seeds"],
                             rep_)
    if not ctx["keep"]:
        shutil.rmtree(camp.root, ignore_errors=True)
    return rows


def outcome_rows(ev, learner, strategy, frac, sel_seed, k, labels, seeds, replicate):
    return [dict(learner=learner, budget=frac, strategy=strategy, sel_seed=sel_seed,
                 replicate=replicate, round=k,
                 labels=labels, eval_seed=int(s), success=int(ok), **{"return": float(ret)})
            for s, ok, ret in zip(seeds, ev.success, ev.returns)]


def fresh_flag_rates(ctx):
    """Fresh expert episodes scored as a round: flagged share in the first 10 steps and after."""
    task, cfg, pool = ctx["task"], ctx["cfg"], ctx["pool"]
    camp = Campaign(ctx["exe"], ctx["out"] / "campaigns" / "fresh-expert", task)
    camp.create(ctx["demos"], f"{task.name} fresh expert")
    r = pool.run(FRESH_SEED + np.arange(cfg["rollouts"]), pool.expert)
    camp.write_round(1, r)
    s = camp.score(1)
    early = r.t < 10
    alpha = float(np.asarray(s["alpha"]).ravel()[0])
    return dict(alpha=alpha, first10=float(s["flagged"][early].mean()),
                rest=float(s["flagged"][~early].mean()), overall=float(s["flagged"].mean()))


def default_out(task_name, exe):
    import hashlib

    tag = hashlib.sha256(str(exe).encode()).hexdigest()[:8]
    return Path(__file__).parent / "results" / f"{task_name}-{tag}"


def main(argv=None):
    p = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawTextHelpFormatter)
    p.add_argument("task", choices=sorted(TASKS))
    p.add_argument("--countersteer", default="target/release/countersteer",
                   help="the countersteer binary to measure (default: %(default)s)")
    p.add_argument("--out", default=None,
                   help="results folder (default: results/TASK-<tag of the binary's path>, so "
                        "runs of different binaries never share a folder)")
    p.add_argument("--quick", action="store_true", help="a smoke run: few episodes, one learner")
    p.add_argument("--learners", nargs="*", choices=learners.LEARNERS)
    p.add_argument("--budgets", nargs="*", type=float, default=[0.01, 0.05])
    p.add_argument("--rounds", type=int, default=3)
    p.add_argument("--demos", type=int, default=None,
                   help="expert demonstration episodes (default: the task's, see README)")
    p.add_argument("--rollouts", type=int, default=60, help="learner episodes per round")
    p.add_argument("--evals", type=int, default=200)
    p.add_argument("--random-seeds", type=int, default=2,
                   help="random's selection seeds per replicate")
    p.add_argument("--replicates", type=int, default=4,
                   help="independent repeats of the whole loop (own demonstrations and "
                        "rollouts; the same evaluation seeds), at most 10")
    p.add_argument("--weights", choices=["ignore", "use"], default="ignore",
                   help="fit with the export's `weight` column (when present) or ignore it")
    p.add_argument("--sample-shares", nargs="*", type=float, default=[],
                   help="also run the review list with these `plan --sample-share` values "
                        "(strategies review-s<percent>); `review` alone uses plan's default")
    p.add_argument("--keep", action="store_true", help="keep the campaign folders")
    p.add_argument("--report-only", action="store_true",
                   help="print the table and redraw the figure from the results folder's episodes.csv")
    args = p.parse_args(argv)
    if args.report_only:
        out = Path(args.out or default_out(args.task, Path(args.countersteer).resolve()))
        return report_only(TASKS[args.task], out.resolve())
    exe = Path(args.countersteer).resolve()
    if not exe.is_file():
        sys.exit(f"no countersteer binary at {exe}; build it (cargo build --release) or pass "
                 "--countersteer PATH")
    task = TASKS[args.task]
    cfg = settings(args)
    out = Path(args.out or default_out(task.name, exe)).resolve()
    if (out / "campaigns").exists():
        sys.exit(f"{out / 'campaigns'} exists: another run is using {out}, or a stopped run left "
                 "it (remove it, or pass --out)")
    out.mkdir(parents=True, exist_ok=True)
    started = time.time()
    print(f"caution: {CAUTION}", file=sys.stderr)
    pool = Envs(task, max(cfg["evals"], cfg["rollouts"], cfg["demos"]))
    if task.batch is not None:
        diff, same = check_batch(task, pool.envs, pool.expert, FRESH_SEED - 1 - np.arange(20))
        print(f"lockstep NumPy step against the environment, 20 expert episodes: largest state "
              f"difference {diff:.2e}, same success: {same}")
        if not same or diff > 1e-3:
            sys.exit("the NumPy copy of the environment's step disagrees with the environment")
    if not (1 <= cfg["replicates"] <= 10 and cfg["rollouts"] <= 100 and cfg["demos"] <= 100):
        sys.exit("--replicates must be 1..10, --rollouts and --demos at most 100 (seed blocks)")
    eval_seeds = EVAL_SEED + np.arange(cfg["evals"])
    expert_ev = pool.run(eval_seeds, pool.expert)
    rows, fresh_all = [], []
    for replicate in range(cfg["replicates"]):
        demos = pool.run(DEMO_SEED + 100 * replicate + np.arange(cfg["demos"]), pool.expert)
        ctx = dict(task=task, cfg=cfg, pool=pool, exe=exe, out=out, demos=demos,
                   eval_seeds=eval_seeds, use_weights=args.weights == "use", keep=args.keep,
                   replicate=replicate)
        fresh_all.append(fresh_flag_rates(ctx))
        run_replicate(ctx, args, eval_seeds, rows)
    fresh = {key: float(np.mean([f[key] for f in fresh_all])) for key in fresh_all[0]}
    finish(task, out, rows, started, exe)
    print(f"expert on the evaluation seeds: success {expert_ev.success.mean():.3f}, "
          f"mean return {expert_ev.returns.mean():.1f}")
    print(f"fresh expert episodes scored as a round (alpha {fresh['alpha']}; mean of "
          f"{len(fresh_all)} replicates, each "
          + ", ".join(f"{f['first10']:.3f}/{f['rest']:.3f}" for f in fresh_all)
          + f"): flagged {fresh['first10']:.3f} in the first 10 steps, {fresh['rest']:.3f} "
          f"after, {fresh['overall']:.3f} overall")
    if not args.keep:
        shutil.rmtree(out / "campaigns", ignore_errors=True)


def run_replicate(ctx, args, eval_seeds, rows):
    """Every learner and strategy on one replicate's demonstrations and rollouts; appends
    the per-episode rows to `rows` (written to episodes.csv as the runs finish)."""
    cfg, pool, demos, out = ctx["cfg"], ctx["pool"], ctx["demos"], ctx["out"]
    for learner in cfg["learners"]:
        bc = learners.fit(learner, demos.states.astype(float), demos.actions.astype(float))
        ev0 = pool.run(eval_seeds, bc)
        plan = [("dagger", None, 0)]
        for frac in cfg["budgets"]:
            plan += [("review", frac, 0), ("novelty", frac, 0)]
            plan += [(f"review-s{round(100 * x)}", frac, 0) for x in args.sample_shares]
            plan += [("random", frac, s) for s in range(1, cfg["random_seeds"] + 1)]
        for strategy, frac, seed in plan:
            t0 = time.time()
            got = one_run(ctx, learner, strategy, frac if frac else 0.0, seed, bc)
            fracs = cfg["budgets"] if strategy == "dagger" else [frac]
            for f in fracs:  # full DAgger does not depend on the budget: shown beside each
                rows += outcome_rows(ev0, learner, strategy, f, seed, 0, 0, eval_seeds,
                                     ctx["replicate"])
                rows += [dict(r, budget=f) for r in got]
            print(f"  replicate {ctx['replicate']} {learner} {strategy} {frac} seed {seed}: "
                  f"{time.time() - t0:.1f} s", file=sys.stderr)
            report.write_csv(out / "episodes.csv", rows)  # kept as the runs finish


def strategies_of(rows):
    """The strategies present, in the table's order: review, its sample-share variants, then
    the others."""
    present = {r["strategy"] for r in rows}
    variants = sorted((s for s in present if s.startswith("review-s")), key=lambda s: int(s[8:]))
    return [s for s in ("review", *variants, "random", "novelty", "dagger") if s in present]


def finish(task, out, rows, started, exe):
    """Prints the table and writes the CSV files and the figure."""
    strategies = strategies_of(rows)
    summary = report.summarise(rows, strategies)
    report.print_table(task, summary)
    report.write_csv(out / "episodes.csv", rows)
    report.write_csv(out / "summary.csv", summary)
    report.figure(out / "success.png", task, summary, strategies)
    print(f"wrote {out / 'episodes.csv'}, {out / 'summary.csv'}, {out / 'success.png'} "
          f"({time.time() - started:.0f} s; countersteer {exe})")


def report_only(task, out):
    """Tables and figure again from a results folder's episodes.csv (e.g. of a stopped run)."""
    import csv

    with open(out / "episodes.csv") as f:
        rows = list(csv.DictReader(f))
    for r in rows:
        r["budget"] = float(r["budget"])
        r["sel_seed"], r["round"], r["labels"] = int(r["sel_seed"]), int(r["round"]), int(r["labels"])
        r["replicate"] = int(r.get("replicate", 0))
        r["success"], r["return"] = int(r["success"]), float(r["return"])
    finish(task, out, rows, time.time(), "(from episodes.csv)")


if __name__ == "__main__":
    main()
