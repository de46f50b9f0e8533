"""countersteer for Python: campaigns, novelty scores, review lists, corrections and merged
sets, numpy in and out.

Every function calls the countersteer library (the same code as the ``countersteer``
command), releasing the interpreter while it works. Arrays come back as numpy arrays; text
columns (episode names, reasons) as numpy unicode arrays.

Errors raise subclasses of :class:`CountersteerError` with the attributes ``file``,
``line`` (a 1-based text line or a 0-based record of a binary file), ``field`` and
``problems`` (every fault found, as dicts with the same keys and ``message``).

Robots and vehicles can hurt people: see :data:`SAFETY_CAUTION`.
"""

from __future__ import annotations

import json
import os
from typing import Dict, Optional, Sequence

import numpy as np

from . import _native
from ._native import (
    SAFETY_CAUTION,
    VERSION,
    CampaignError,
    CountersteerError,
    ExportError,
    LedgerError,
    NoveltyError,
    StaleModelError,
    UsageError,
)

__all__ = [
    "Campaign",
    "Model",
    "open_campaign",
    "write_round",
    "score",
    "save_scores",
    "plan",
    "correct",
    "tally",
    "export",
    "load_merged",
    "CountersteerError",
    "CampaignError",
    "LedgerError",
    "NoveltyError",
    "StaleModelError",
    "ExportError",
    "UsageError",
    "SAFETY_CAUTION",
    "VERSION",
]

_TEXT = ("episode", "source", "reasons_joined", "scale_origin")


def _path(p) -> str:
    return os.fspath(p)


def _texts(d: dict) -> dict:
    """Turns the text columns of a result into numpy unicode arrays."""
    for key in _TEXT:
        if key in d and isinstance(d[key], list):
            d[key] = np.array(d[key], dtype=str)
    return d


def _f32(a, cols: Optional[int] = None) -> np.ndarray:
    a = np.ascontiguousarray(a, dtype=np.float32)
    if a.ndim == 1 and cols is not None:
        a = a.reshape(-1, cols)
    return a


def _i64(a) -> np.ndarray:
    return np.ascontiguousarray(a, dtype=np.int64).reshape(-1)


def _names(a) -> list:
    return [str(x) for x in np.asarray(a).reshape(-1)]


class Campaign:
    """An opened campaign folder: spec, demonstrations and rounds."""

    def __init__(self, path):
        self._inner = _native.Campaign(_path(path))
        self.file = json.loads(self._inner.spec_json())

    @property
    def root(self) -> str:
        """The campaign folder."""
        return self._inner.root

    @property
    def name(self) -> str:
        """The campaign's name."""
        return self._inner.name

    @property
    def spec(self) -> dict:
        """The spec (features and action channels) as in campaign.json."""
        return self.file["spec"]

    @property
    def novelty(self) -> dict:
        """The novelty settings (k, alpha)."""
        return self.file["novelty"]

    @property
    def rounds(self) -> list:
        """Round numbers, ascending."""
        return list(self._inner.rounds)

    def round(self, number: int) -> Dict[str, np.ndarray]:
        """A round's steps: episode, t, states, actions (and intervention when known)."""
        return _texts(dict(self._inner.round(int(number))))

    def demonstrations(self) -> Dict[str, np.ndarray]:
        """The demonstrations, as :meth:`round` gives a round."""
        return _texts(dict(self._inner.demonstrations()))


def open_campaign(path) -> Campaign:
    """Opens (loads and checks) a campaign folder."""
    return Campaign(path)


def write_round(campaign, round: int, name: str, episode, t, states, actions, intervention=None) -> str:
    """Checks steps given as arrays and saves them as ``rounds/<round>/<name>.npz`` (the
    campaign's own step format, written beside its name and renamed; an existing file is
    never replaced). Problems raise :class:`CampaignError` naming the record and field."""
    states = _f32(states)
    actions = _f32(actions)
    flags = None if intervention is None else np.ascontiguousarray(intervention, dtype=bool).reshape(-1)
    return _native.write_round(
        _path(campaign), int(round), name, _names(episode), _i64(t), states, actions, flags
    )


def score(campaign, round: int, save: bool = True) -> Dict[str, np.ndarray]:
    """Builds the novelty model and scores every step of a round (``countersteer score``);
    the dict holds the fields of ``analysis/<round>/scores.npz``, saved unless ``save`` is
    false."""
    return _texts(dict(_native.score(_path(campaign), int(round), save)))


def save_scores(campaign, round: int, scores: Dict[str, np.ndarray]) -> str:
    """Saves scores (e.g. gathered from shards) as the round's ``scores.npz``."""
    fields = {k: v for k, v in scores.items() if k not in ("episode", "row")}
    return _native.save_scores(_path(campaign), int(round), fields)


def plan(campaign, round: int, budget: int = 50, min_gap: int = 10, before_intervention: int = 10,
         action_gap: float = 0.25, fill: bool = True, rescore: bool = False) -> Dict[str, np.ndarray]:
    """Plans the review list of a round (``countersteer plan``; saved the same way): arrays of
    the entries by rank, ``reasons`` as a list of lists and ``reasons_joined`` as text."""
    d = dict(_native.plan(_path(campaign), int(round), int(budget), int(min_gap),
                          int(before_intervention), float(action_gap), fill, rescore))
    d["reasons_joined"] = [",".join(r) for r in d["reasons"]]
    return _texts(d)


def correct(campaign, annotator: str, round: int, episode, t, verdict, actions=None,
            note: Optional[Sequence[Optional[str]]] = None, retracts=None) -> np.ndarray:
    """Appends many verdicts to one annotator's ledger at once, all or nothing.

    ``verdict[i]`` is ``"action"`` (reads ``actions[i]``, choice indices for discrete
    channels), ``"skip"``, ``"unrecoverable"`` or ``"retract"`` (reads ``retracts[i]``, the
    sequence number withdrawn). A single string applies to every row. Every problem of the
    batch raises one :class:`LedgerError` whose ``problems`` list them by line (row + 1) and
    field; nothing is written then. Returns the sequence numbers written."""
    n = len(_i64(t))
    verdicts = [verdict] * n if isinstance(verdict, str) else [str(v) for v in verdict]
    acts = None if actions is None else _f32(actions)
    if acts is not None and acts.ndim == 1:
        acts = acts.reshape(n, -1)
    notes = None if note is None else [None if x is None else str(x) for x in note]
    ret = None if retracts is None else _i64(retracts)
    return _native.correct(_path(campaign), annotator, int(round), _names(episode), _i64(t),
                           verdicts, acts, notes, ret)


def tally(campaign) -> Dict[str, np.ndarray]:
    """The consensus of every judged step (``countersteer tally``), by (round, row)."""
    return _texts(dict(_native.tally(_path(campaign))))


def export(campaign, out, format: Optional[str] = None, min_agreement: Optional[float] = None,
           min_annotators: int = 1, weighting: str = "uniform", correction_weight: float = 1.0) -> dict:
    """Exports the merged set and its manifest (``countersteer export``); returns the
    manifest."""
    text = _native.export(_path(campaign), _path(out), format, min_agreement, int(min_annotators),
                          weighting, float(correction_weight))
    return json.loads(text)


def load_merged(path, campaign) -> Dict[str, np.ndarray]:
    """Reads a merged set (``.npz``, ``.jsonl`` or ``.csv``) back as arrays."""
    return _texts(dict(_native.load_merged(_path(path), _path(campaign))))


class Model:
    """A campaign's saved novelty model (``analysis/model.bin``), loaded once and used for
    many shards: scoring rows ``a..b`` gives exactly those rows of a whole-round scoring."""

    def __init__(self, native):
        self._native = native

    @classmethod
    def build(cls, campaign) -> "Model":
        """Builds the model and saves it as ``analysis/model.bin``."""
        return cls(_native.Model.build(_path(campaign)))

    @classmethod
    def load(cls, campaign) -> "Model":
        """Loads ``analysis/model.bin``; raises :class:`StaleModelError` when the campaign's
        demonstrations or novelty settings changed since it was built."""
        return cls(_native.Model.load(_path(campaign)))

    @property
    def threshold(self) -> float:
        return self._native.threshold

    @property
    def k(self) -> int:
        return self._native.k

    @property
    def alpha(self) -> float:
        return self._native.alpha

    @property
    def scale(self) -> np.ndarray:
        """Per-feature scales of the novelty distance."""
        return self._native.scale

    @property
    def fingerprint(self) -> str:
        return self._native.fingerprint

    def score_rows(self, round: int, start: int, stop: int) -> Dict[str, np.ndarray]:
        """Scores rows ``start..stop`` of a round (the dict adds ``row``)."""
        return _texts(dict(self._native.score_rows(int(round), int(start), int(stop))))

    def score_arrays(self, episode, t, states, actions, intervention=None) -> Dict[str, np.ndarray]:
        """Scores steps given as arrays, rows in episode order."""
        flags = None if intervention is None else np.ascontiguousarray(intervention, dtype=bool).reshape(-1)
        return _texts(dict(self._native.score_arrays(_names(episode), _i64(t), _f32(states),
                                                     _f32(actions), flags)))


# Fields of a scores dict that describe the whole round, not one row each.
_PER_ROUND = ("threshold", "alpha", "scale", "phase_start", "phase_threshold", "scale_origin")


def concat_scores(parts: Sequence[Dict[str, np.ndarray]]) -> Dict[str, np.ndarray]:
    """Joins per-shard scores (each with a ``row`` column) into one dict in row order; the
    per-round fields (``threshold``, ``alpha``, ``scale``, the calibration phases and the
    scales' origins) are taken from the first part."""
    parts = [p for p in parts if len(p["novelty"])]
    if not parts:
        raise UsageError("no scored rows to join")
    rows = np.concatenate([np.asarray(p["row"]) for p in parts])
    order = np.argsort(rows, kind="stable")
    out = {}
    for key in parts[0]:
        if key in _PER_ROUND:
            out[key] = np.asarray(parts[0][key])
        else:
            out[key] = np.concatenate([np.asarray(p[key]) for p in parts])[order]
    return out
