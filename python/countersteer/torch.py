"""A ``torch.utils.data.Dataset`` over a merged set. torch is imported only when this module
is used; the rest of countersteer never needs it.

    from countersteer.torch import MergedDataset
    ds = MergedDataset("exports/round-3.npz", "my-campaign")
    state, action, weight = ds[0]
"""

from __future__ import annotations

import functools

import numpy as np

from . import load_merged


def _torch():
    try:
        import torch
    except ImportError as e:  # pragma: no cover - depends on the environment
        raise ImportError(
            "countersteer.torch needs PyTorch: pip install torch (or pip install countersteer[torch])"
        ) from e
    return torch


@functools.lru_cache(maxsize=None)
def dataset_class():
    """The Dataset class (built on first use, so importing this module needs no torch)."""
    torch = _torch()

    class MergedDataset(torch.utils.data.Dataset):
        """Rows of a merged set as (state, action, weight) float32 tensors."""

        def __init__(self, path, campaign):
            m = load_merged(path, campaign)
            self.columns = m
            self.states = torch.from_numpy(np.ascontiguousarray(m["states"], dtype=np.float32))
            self.actions = torch.from_numpy(np.ascontiguousarray(m["actions"], dtype=np.float32))
            self.weights = torch.from_numpy(np.ascontiguousarray(m["weight"], dtype=np.float32))

        def __len__(self):
            return self.states.shape[0]

        def __getitem__(self, i):
            return self.states[i], self.actions[i], self.weights[i]

    return MergedDataset


def __getattr__(name):
    if name == "MergedDataset":
        return dataset_class()
    raise AttributeError(name)
