"""Shared fixtures: copies of the demo campaign and the countersteer command to compare with."""

import os
import shutil
import subprocess
from pathlib import Path

import pytest

REPO = Path(__file__).resolve().parents[2]
DEMO = REPO / "demo-data"


def _binary():
    given = os.environ.get("COUNTERSTEER_BIN")
    if given:
        return Path(given)
    for profile in ("debug", "release"):
        p = REPO / "target" / profile / "countersteer"
        if p.exists():
            return p
    return None


@pytest.fixture(scope="session")
def cli_bin():
    """The countersteer command built from this repository (COUNTERSTEER_BIN, else target/)."""
    b = _binary()
    if b is None or not b.exists():
        if os.environ.get("CI"):
            pytest.fail("no countersteer binary: build it (cargo build) or set COUNTERSTEER_BIN")
        pytest.skip("no countersteer binary in target/ (cargo build, or set COUNTERSTEER_BIN)")
    return b


@pytest.fixture
def cli(cli_bin):
    """Runs a countersteer subcommand; fails the test with its output when it fails."""

    def run(*args, env=None):
        e = dict(os.environ)
        e.update(env or {})
        r = subprocess.run([str(cli_bin), *map(str, args)], capture_output=True, text=True, env=e)
        assert r.returncode == 0, f"countersteer {' '.join(map(str, args))}:\n{r.stdout}\n{r.stderr}"
        return r.stdout

    return run


@pytest.fixture
def demo(tmp_path):
    """A fresh copy of the demo campaign."""
    dst = tmp_path / "demo"
    shutil.copytree(DEMO, dst)
    return dst


@pytest.fixture
def twin(tmp_path):
    """Two identical copies of the demo campaign: one for the command line, one for Python."""
    a, b = tmp_path / "cli", tmp_path / "py"
    shutil.copytree(DEMO, a)
    shutil.copytree(DEMO, b)
    return a, b
