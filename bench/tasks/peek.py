"""Prints the table of a results folder's episodes.csv without writing anything (for a run in progress)."""
import csv, sys
from pathlib import Path
import report
from run import strategies_of
from tasks import TASKS

task, out = sys.argv[1], Path(sys.argv[2])
with open(out / "episodes.csv") as f:
    rows = list(csv.DictReader(f))
for r in rows:
    r["budget"] = float(r["budget"]); r["sel_seed"], r["round"], r["labels"] = int(r["sel_seed"]), int(r["round"]), int(r["labels"])
    r["success"], r["return"] = int(r["success"]), float(r["return"])
learners = sys.argv[3:] 
if learners:
    rows = [r for r in rows if r["learner"] in learners]
report.print_table(TASKS[task], report.summarise(rows, strategies_of(rows)))
