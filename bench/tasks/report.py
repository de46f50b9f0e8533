"""Intervals, paired differences, the printed tables, the CSV and the figure."""

import csv

import numpy as np

RESAMPLES = 10_000
BOOT_SEED = 20261202


def bootstrap_ci(x, resamples=RESAMPLES, seed=BOOT_SEED):
    """Mean and 95 % percentile bootstrap interval over episodes (Efron & Tibshirani 1993,
    An Introduction to the Bootstrap, ch. 13), with a fixed generator."""
    x = np.asarray(x, dtype=float)
    rng = np.random.default_rng(seed)
    idx = rng.integers(0, len(x), size=(resamples, len(x)))
    means = x[idx].mean(axis=1)
    lo, hi = np.percentile(means, [2.5, 97.5])
    return x.mean(), lo, hi


def bootstrap_ci_2(x, resamples=RESAMPLES, seed=BOOT_SEED):
    """Mean and 95 % percentile interval of a (replicates, episodes) array by a two-stage
    bootstrap: replicates with replacement, then episodes within each (Davison & Hinkley
    1997, Bootstrap Methods and their Application, section 3.8). With one replicate it is
    the plain bootstrap over episodes."""
    x = np.asarray(x, dtype=float)
    if x.ndim == 1 or x.shape[0] == 1:
        return bootstrap_ci(x.ravel(), resamples, seed)
    rng = np.random.default_rng(seed)
    n_rep, n_ep = x.shape
    means = np.empty(resamples)
    for b in range(0, resamples, 500):
        m = min(500, resamples - b)
        reps = rng.integers(0, n_rep, size=(m, n_rep))
        eps = rng.integers(0, n_ep, size=(m, n_rep, n_ep))
        means[b:b + m] = x[reps[:, :, None], eps].mean(axis=(1, 2))
    lo, hi = np.percentile(means, [2.5, 97.5])
    return x.mean(), lo, hi


def summarise(rows, strategies):
    """Per (learner, budget, round, strategy): success and return with intervals, labels,
    and the paired difference in success against the mean of random's selection seeds of the
    same replicate. Intervals come from the two-stage bootstrap over replicates and
    evaluation episodes, so they include the spread between independent repeats of the loop
    (which one labelled set cannot show)."""
    by = {}
    for r in rows:
        key = (r["learner"], r["budget"], r["round"], r["strategy"], r.get("replicate", 0),
               r["sel_seed"])
        by.setdefault(key, {"success": [], "return": [], "labels": r["labels"]})
        by[key]["success"].append(r["success"])
        by[key]["return"].append(r["return"])
    out = []
    cells = sorted({k[:3] for k in by})
    for learner, budget, rnd in cells:
        reps = sorted({k[4] for k in by if k[:3] == (learner, budget, rnd)})

        def per_rep(s, field, only=None):
            """(replicates, episodes): the mean over selection seeds in each replicate that
            has the strategy (and is in `only`), and those replicates."""
            got, used = [], []
            for rep in reps if only is None else only:
                runs = [np.array(v[field], float) for k, v in by.items()
                        if k[:5] == (learner, budget, rnd, s, rep)]
                if runs:
                    got.append(np.mean(runs, axis=0))
                    used.append(rep)
            return (np.array(got) if got else None), used

        for s in strategies:
            succ, used = per_rep(s, "success")
            if succ is None:
                continue
            ret, _ = per_rep(s, "return")
            rand_mean, rand_used = per_rep("random", "success", used)
            runs = [v for k, v in by.items() if k[:4] == (learner, budget, rnd, s)]
            m, lo, hi = bootstrap_ci_2(succ)
            rm, rlo, rhi = bootstrap_ci_2(ret)
            row = dict(learner=learner, budget=budget, round=rnd, strategy=s,
                       success=m, lo=lo, hi=hi, ret=rm, ret_lo=rlo, ret_hi=rhi,
                       labels=np.mean([v["labels"] for v in runs]), diff=np.nan,
                       diff_lo=np.nan, diff_hi=np.nan)
            if rand_mean is not None and s != "random":
                mine = succ[[used.index(r) for r in rand_used]]
                row["diff"], row["diff_lo"], row["diff_hi"] = bootstrap_ci_2(mine - rand_mean)
            out.append(row)
    return out


def print_table(task, summary):
    print(f"\n== {task.name} ({task.env_id}); success: {task.success_text}")
    print(f"{'learner':<7} {'budget':>6} {'round':>5}  {'strategy':<11} {'labels':>7}  "
          f"{'success [95% CI]':<22} {'minus random [95% CI]':<25} {'return [95% CI]'}")
    for r in summary:
        diff = ("" if np.isnan(r["diff"]) else
                f"{r['diff']:+.3f} [{r['diff_lo']:+.3f}, {r['diff_hi']:+.3f}]")
        print(f"{r['learner']:<7} {r['budget']:>6} {r['round']:>5}  {r['strategy']:<11} "
              f"{r['labels']:>7.0f}  {r['success']:.3f} [{r['lo']:.3f}, {r['hi']:.3f}]   "
              f"{diff:<25} {r['ret']:.1f} [{r['ret_lo']:.1f}, {r['ret_hi']:.1f}]")


def write_csv(path, rows):
    keys = list(rows[0].keys())
    with open(path, "w", newline="") as f:
        w = csv.DictWriter(f, fieldnames=keys)
        w.writeheader()
        w.writerows(rows)


def figure(path, task, summary, strategies):
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt
    import matplotlib.ticker

    panels = sorted({(r["learner"], r["budget"]) for r in summary if r["budget"] != "all"})
    learners = sorted({p[0] for p in panels})
    budgets = sorted({p[1] for p in panels})
    fig, axes = plt.subplots(len(learners), len(budgets), squeeze=False,
                             figsize=(4.2 * len(budgets), 3.0 * len(learners)), sharey=True)
    for i, learner in enumerate(learners):
        for j, budget in enumerate(budgets):
            ax = axes[i][j]
            for s in strategies:
                pts = sorted((r["round"], r["success"], r["lo"], r["hi"]) for r in summary
                             if r["learner"] == learner and r["strategy"] == s
                             and r["budget"] in (budget, "all", "none"))
                if not pts:
                    continue
                x, y, lo, hi = map(np.array, zip(*pts))
                ax.plot(x, y, marker="o", label=s)
                ax.fill_between(x, lo, hi, alpha=0.15)
            ax.set_title(f"{task.name}: {learner}, budget {budget}", fontsize=9)
            ax.set_xlabel("round")
            ax.xaxis.set_major_locator(matplotlib.ticker.MaxNLocator(integer=True))
            ax.set_ylabel("success")
            ax.set_ylim(-0.02, 1.02)
    axes[0][0].legend(fontsize=7)
    fig.tight_layout()
    fig.savefig(path, dpi=110)
    plt.close(fig)
