"""Writes the NumPy members of the bad-input corpus with numpy itself.
Run: python3 tests/bad_inputs/make_bad_npz.py   (made with numpy 1.26.4)"""
import pathlib

import numpy as np

here = pathlib.Path(__file__).parent
ok = dict(states=np.zeros((2, 3)), actions=np.zeros((2, 2)),
          episode=np.array(["a", "a"]), t=np.array([0, 1]))
missing_t = {k: v for k, v in ok.items() if k != "t"}
np.savez(here / "npz_missing_array.npz", **missing_t)
np.savez(here / "npz_wrong_shape.npz", **{**ok, "states": np.zeros((2, 2))})
np.savez(here / "npz_float_time.npz", **{**ok, "t": np.array([0.0, 0.5])})
with open(here / "npz_not_a_zip.npz", "wb") as f:
    f.write(b"this is not a zip archive\n")
