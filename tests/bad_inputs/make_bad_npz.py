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

# Hostile members, written byte by byte: the .npy header says one thing, the data another.
import struct
import zipfile


def npy(descr, shape, data, header_len=None):
    text = "{'descr': '%s', 'fortran_order': False, 'shape': %s, }" % (descr, shape)
    text = text.ljust((len(text) + 11) // 64 * 64 + 64 - 11) + "\n"
    length = len(text) if header_len is None else header_len
    return b"\x93NUMPY\x02\x00" + struct.pack("<I", length) + text.encode() + data


def put(z, name, data):
    # A fixed date keeps the archives byte-identical from run to run.
    info = zipfile.ZipInfo(name, date_time=(2026, 1, 1, 0, 0, 0))
    info.compress_type = zipfile.ZIP_DEFLATED
    z.writestr(info, data)


def hostile(name, states):
    with zipfile.ZipFile(here / name, "w", zipfile.ZIP_DEFLATED) as z:
        for key, arr in ok.items():
            if key != "states":
                put(z, key + ".npy", _save(arr))
        put(z, "states.npy", states)


def _save(arr):
    import io
    b = io.BytesIO()
    np.save(b, arr)
    return b.getvalue()


# A million rows declared, two rows' worth of bytes present.
hostile("npz_lying_shape.npz", npy("<f8", "(1000000, 3)", np.zeros((2, 3)).tobytes()))
# More rows declared than a file may hold (the record cap), before any data is read.
hostile("npz_too_many_rows.npz", npy("<f8", "(100000000000, 3)", b""))
# A header that declares four gigabytes of description.
hostile("npz_header_bomb.npz", npy("<f8", "(2, 3)", b"", header_len=0xFFFFFFF0))
# Rows a billion values wide: refused from the header's shape, before any data is read.
hostile("npz_wide_rows.npz", npy("<f8", "(2, 1000000000)", b""))
# Episode names of 100,000 characters each (400 kB per name, as NumPy stores them).
with zipfile.ZipFile(here / "npz_long_strings.npz", "w", zipfile.ZIP_DEFLATED) as z:
    for key, arr in ok.items():
        if key != "episode":
            put(z, key + ".npy", _save(arr))
    put(z, "episode.npy", npy("<U100000", "(2,)", b""))

# Outcomes: `outcome` must hold names, not numbers (written with numpy 2.4.6).
np.savez(here / "npz_outcome_numbers.npz", **{**ok, "outcome": np.array([0, 1])})
