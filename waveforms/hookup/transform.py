"""A declarative per-channel correction of a `Capture`, applied lazily to its samples.

A hook-up correction is a list of `ChannelRule`: each output channel is a sum
of signed input channels -- a permutation (``Ib <- Ic``), a polarity reversal
(``Ib <- -Ib``) or a derived channel (``Ib <- -(Ia + Ic)``, Kirchhoff's
current law on a three-wire circuit).  `TransformSource` wraps the capture's
own sample source and applies the rules to whatever block is read, so a
streaming or HDF5-backed source is corrected chunk by chunk and the file is
never rewritten; `apply_rules` returns the corrected `Capture` with a
provenance entry.
"""

from __future__ import annotations

import dataclasses
from collections.abc import Sequence
from typing import Any

import numpy as np

from ..capture import Capture, Channel
from ..errors import InvalidParameterError


@dataclasses.dataclass(frozen=True)
class ChannelRule:
    """One output channel as a signed sum of recorded channels.

    Parameters
    ----------
    channel : Channel
        The output channel (name, kind, conductor, reference as corrected).
    terms : tuple of (float, str)
        ``(coefficient, recorded channel name)``; ``((1.0, "Ic"),)`` is a move,
        ``((-1.0, "Ib"),)`` a reversal, ``((-1.0, "Ia"), (-1.0, "Ic"))`` a derived current.
    reason : str
        Why (one line, for the provenance).
    """

    channel: Channel
    terms: tuple[tuple[float, str], ...]
    reason: str = ""

    @property
    def is_identity(self) -> bool:
        return len(self.terms) == 1 and self.terms[0] == (1.0, self.channel.name)

    def describe(self) -> str:
        """``Ib = -(Ia + Ic)``-style text."""
        if len(self.terms) == 1:
            c, n = self.terms[0]
            return f"{self.channel.name} = {'-' if c < 0 else ''}{n}"
        if all(c == -1.0 for c, _ in self.terms):
            return f"{self.channel.name} = -({' + '.join(n for _, n in self.terms)})"
        return f"{self.channel.name} = " + " + ".join(f"{c:g}*{n}" for c, n in self.terms)

    def to_dict(self) -> dict[str, Any]:
        return {"channel": self.channel.name, "terms": [[float(c), n] for c, n in self.terms], "rule": self.describe(),
                "reason": self.reason}


class TransformSource:
    """A sample source whose rows are linear combinations of another source's rows.

    ``matrix[k, j]`` is the weight of base channel ``j`` in output channel ``k``;
    only the base rows an output needs are read.
    """

    def __init__(self, base: Any, matrix: np.ndarray) -> None:
        m = np.asarray(matrix, dtype=np.float64)
        if m.ndim != 2 or m.shape[1] != base.n_channels:
            raise InvalidParameterError(f"transform matrix of shape {m.shape} does not fit a source of {base.n_channels} channels")
        self._base = base
        self._m = m

    @property
    def n_samples(self) -> int:
        return int(self._base.n_samples)

    @property
    def n_channels(self) -> int:
        return int(self._m.shape[0])

    def read(self, start: int, stop: int, channel_indices: Sequence[int]) -> np.ndarray:
        rows = self._m[list(channel_indices)]
        need = np.flatnonzero(np.any(rows != 0.0, axis=0))
        if need.size == 0:
            return np.zeros((len(rows), max(0, stop - start)))
        x = np.asarray(self._base.read(start, stop, [int(j) for j in need]), dtype=np.float64)
        return rows[:, need] @ x


def apply_rules(capture: Capture, rules: Sequence[ChannelRule], step: str) -> Capture:
    """The capture with the rules applied (lazily) and ``step`` added to its provenance history.

    Channels without a rule are kept as they are, in their order; a rule whose
    channel name is new adds that channel at the end of its kind's block.

    Raises
    ------
    InvalidParameterError
        A rule names a channel the capture does not have.
    """
    by_name = {r.channel.name: r for r in rules}
    names = list(capture.channel_names)
    for r in rules:
        for _, n in r.terms:
            if n not in names:
                raise InvalidParameterError(f"correction {r.describe()}: the capture has no channel {n!r}")
    out: list[Channel] = []
    for ch in capture.channels:
        out.append(by_name[ch.name].channel if ch.name in by_name else ch)
    for r in rules:
        if r.channel.name not in names:
            last = max((i for i, c in enumerate(out) if c.kind == r.channel.kind), default=len(out) - 1)
            out.insert(last + 1, r.channel)
    m = np.zeros((len(out), len(names)))
    for k, ch in enumerate(out):
        terms = by_name[ch.name].terms if ch.name in by_name else ((1.0, ch.name),)
        for c, n in terms:
            m[k, names.index(n)] += c
    cap = capture.replace(channels=tuple(out), source=TransformSource(capture.source, m))
    return cap.with_history(step)
