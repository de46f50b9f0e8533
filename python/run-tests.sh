#!/usr/bin/env bash
# Builds the Python module into a fresh venv and runs its pytest suite (called by .ci/run
# after `cargo test`, whose dependencies and countersteer binary it reuses).
#
# The venv lives in target/python-venv; the module is built by `maturin develop` in cargo's
# dev profile into the shared target/ folder, so every dependency the test build already
# compiled is reused (countersteer itself is built once more, without the GUI feature, and
# pyo3/numpy are new). Ray is installed too unless COUNTERSTEER_CI_RAY=0; when it cannot be
# installed, the Ray test is skipped and says so.
set -euo pipefail
cd "$(dirname "$0")/.."
venv=target/python-venv
python3 -m venv "$venv"
pip=("$venv/bin/pip" install --quiet --disable-pip-version-check)
"${pip[@]}" maturin==1.16.0 numpy==1.26.4 pytest==8.3.5
if [ "${COUNTERSTEER_CI_RAY:-1}" != 0 ]; then
  "${pip[@]}" "ray[data]==2.60.0" \
    || echo "python: ray could not be installed; the Ray shard test will be skipped"
fi
(cd python && VIRTUAL_ENV="$PWD/../$venv" PATH="$PWD/../$venv/bin:$PATH" \
  maturin develop --locked --quiet)
COUNTERSTEER_BIN="${COUNTERSTEER_BIN:-$PWD/target/debug/countersteer}" \
  "$venv/bin/python" -m pytest -q -p no:cacheprovider python/tests
