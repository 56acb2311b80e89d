"""The `Capture`: sample arrays of a three-phase recording plus frozen metadata.

Every importer returns a `Capture`; every later stage (measurement, speed,
detectors, report) reads one and never re-reads the file.

Samples are held by a *sample source* (`ArraySource` in memory, or a lazy
HDF5-backed source) and are reached through `Capture.read` or chunk by chunk
through `Capture.iter_chunks`, so an hour-long capture can be processed in
bounded memory.  Values are float64 in base SI units (V, A) with CT/PT ratios
and unit prefixes already applied.  Missing samples are NaN and are listed in
`Capture.gaps`; nothing is ever filled in silently.
"""

from __future__ import annotations

import dataclasses
import datetime as _dt
from collections.abc import Iterator, Sequence
from typing import TYPE_CHECKING, Any, Literal, Protocol

import numpy as np

from .errors import InvalidParameterError

if TYPE_CHECKING:  # for the annotation only: nothing of waveforms.motor is imported at run time
    from .motor.nameplate import Nameplate

Kind = Literal["voltage", "current"]
Conductor = Literal["A", "B", "C", "N"]
Reference = Literal["LN", "LL", "line", "neutral", "winding"]
Wiring = Literal["3-wire", "4-wire"]

KINDS: tuple[str, ...] = ("voltage", "current")
CONDUCTORS: tuple[str, ...] = ("A", "B", "C", "N")
REFERENCES: tuple[str, ...] = ("LN", "LL", "line", "neutral", "winding")
BASE_UNIT = {"voltage": "V", "current": "A"}
#: For a line-to-line voltage the channel's conductor is the first line of the
#: pair; the second is the next one in A-B-C order (A -> AB, B -> BC, C -> CA).
LL_PAIR = {"A": "AB", "B": "BC", "C": "CA"}
#: A delta winding current (reference ``"winding"``, a six-lead hook-up) is named the same way: conductor
#: ``"A"`` is the winding A-B, measured in the direction A -> B (``Iab``), ``"B"`` B-C, ``"C"`` C-A.
WINDING_PAIR = LL_PAIR


@dataclasses.dataclass(frozen=True)
class Channel:
    """One recorded signal.

    Parameters
    ----------
    name : str
        Name inside the capture (unique), e.g. ``"Va"``, ``"Vab"``, ``"Ia"``.
    kind : {"voltage", "current"}
    conductor : {"A", "B", "C", "N"}
        The line the signal belongs to.  For a line-to-line voltage, the first
        line of the pair (``"A"`` for Vab, see `LL_PAIR`); for a winding
        current, the winding's first terminal (``"A"`` for Iab, see `WINDING_PAIR`).
    reference : {"LN", "LL", "line", "neutral", "winding"}
        ``"LN"`` line-to-neutral voltage, ``"LL"`` line-to-line voltage,
        ``"line"`` a line current, ``"neutral"`` the neutral current (or a
        neutral-to-earth voltage), ``"winding"`` the current in one winding of
        a delta-connected motor, measured on its six leads (A -> B for Iab);
        `waveforms.winding` turns three of them into line currents.
    unit : str
        Unit of the stored samples, always the base unit ``"V"`` or ``"A"``.
    source_label : str
        The header / dataset name the channel came from, as written in the file.
    scale : float
        Factor that was applied to the raw numbers (unit prefix x CT/PT ratio).
    """

    name: str
    kind: Kind
    conductor: Conductor
    reference: Reference
    unit: str
    source_label: str = ""
    scale: float = 1.0

    def __post_init__(self) -> None:
        if self.kind not in KINDS:
            raise InvalidParameterError(f"channel {self.name!r}: kind={self.kind!r} must be one of {KINDS}")
        if self.conductor not in CONDUCTORS:
            raise InvalidParameterError(
                f"channel {self.name!r}: conductor={self.conductor!r} must be one of {CONDUCTORS}"
            )
        if self.reference not in REFERENCES:
            raise InvalidParameterError(
                f"channel {self.name!r}: reference={self.reference!r} must be one of {REFERENCES}"
            )
        if self.unit != BASE_UNIT[self.kind]:
            raise InvalidParameterError(
                f"channel {self.name!r}: unit={self.unit!r}; samples are stored in {BASE_UNIT[self.kind]!r}"
            )
        if self.kind == "current" and self.reference in ("LN", "LL"):
            raise InvalidParameterError(f"channel {self.name!r}: a current has reference 'line', 'neutral' or 'winding'")
        if self.kind == "voltage" and self.reference in ("line", "winding"):
            raise InvalidParameterError(f"channel {self.name!r}: a voltage has reference 'LN', 'LL' or 'neutral'")
        if self.reference == "LL" and self.conductor == "N":
            raise InvalidParameterError(f"channel {self.name!r}: a line-to-line voltage needs conductor A, B or C")
        if self.reference == "winding" and self.conductor == "N":
            raise InvalidParameterError(f"channel {self.name!r}: a winding current needs conductor A, B or C (winding A-B, B-C, C-A)")

    @property
    def label(self) -> str:
        """Short trade label: ``Va``, ``Vab``, ``Ia``, ``In``; ``Iab`` for the winding current A-B."""
        letter = "V" if self.kind == "voltage" else "I"
        if self.reference in ("LL", "winding"):
            return letter + LL_PAIR[self.conductor].lower()
        return letter + self.conductor.lower()


@dataclasses.dataclass(frozen=True)
class Gap:
    """A stretch of missing samples, ``[start_index, stop_index)``, stored as NaN."""

    start_index: int
    stop_index: int
    reason: str = "missing samples"

    @property
    def n_samples(self) -> int:
        return self.stop_index - self.start_index


@dataclasses.dataclass(frozen=True)
class Provenance:
    """Where a capture came from, so that a result can be traced to its file.

    Parameters
    ----------
    source_path : str
        Path of the input file as given.
    sha256 : str
        Hex SHA-256 of the input file's bytes.
    importer : str
        Registry name of the importer that read it (``"csv"``, ``"hdf5-native"``...).
    mapping : dict
        The channel mapping actually used: column/dataset -> channel fields, and
        whether each entry was given or guessed.
    notes : tuple of str
        What the importer noticed or guessed (time-base irregularities,
        recognised header spellings, defaults taken).
    history : tuple of str
        Processing steps applied since import (conversion, resampling).
    """

    source_path: str = ""
    sha256: str = ""
    importer: str = ""
    mapping: dict[str, Any] = dataclasses.field(default_factory=dict)
    notes: tuple[str, ...] = ()
    history: tuple[str, ...] = ()

    def to_dict(self) -> dict[str, Any]:
        return {
            "source_path": self.source_path,
            "sha256": self.sha256,
            "importer": self.importer,
            "mapping": self.mapping,
            "notes": list(self.notes),
            "history": list(self.history),
        }

    @classmethod
    def from_dict(cls, d: dict[str, Any]) -> Provenance:
        return cls(
            source_path=str(d.get("source_path", "")),
            sha256=str(d.get("sha256", "")),
            importer=str(d.get("importer", "")),
            mapping=dict(d.get("mapping", {})),
            notes=tuple(d.get("notes", ())),
            history=tuple(d.get("history", ())),
        )


class SampleSource(Protocol):
    """What a `Capture` needs from its sample storage."""

    @property
    def n_samples(self) -> int: ...

    @property
    def n_channels(self) -> int: ...

    def read(self, start: int, stop: int, channel_indices: Sequence[int]) -> np.ndarray:
        """Return float64 samples ``[start, stop)`` of the given channels, shape (n_ch, n)."""
        ...


class ArraySource:
    """Samples held in memory, one row per channel (shape ``(n_channels, n_samples)``)."""

    def __init__(self, samples: np.ndarray) -> None:
        arr = np.asarray(samples, dtype=np.float64)
        if arr.ndim != 2:
            raise InvalidParameterError(f"samples must be 2-D (n_channels, n_samples), got shape {arr.shape}")
        self._samples = arr
        self._samples.setflags(write=False)

    @property
    def n_samples(self) -> int:
        return int(self._samples.shape[1])

    @property
    def n_channels(self) -> int:
        return int(self._samples.shape[0])

    def read(self, start: int, stop: int, channel_indices: Sequence[int]) -> np.ndarray:
        return self._samples[list(channel_indices), start:stop]


@dataclasses.dataclass(frozen=True)
class Chunk:
    """A block of samples handed out by `Capture.iter_chunks`.

    ``data[:, i]`` is sample ``start_index + i``.  The first ``lead`` samples
    overlap the previous chunk and the last ``trail`` overlap the next; the
    samples this chunk *owns* are ``data[:, lead:data.shape[1] - trail]``.
    """

    start_index: int
    data: np.ndarray
    lead: int
    trail: int

    @property
    def owned(self) -> np.ndarray:
        return self.data[:, self.lead : self.data.shape[1] - self.trail]

    @property
    def owned_start_index(self) -> int:
        return self.start_index + self.lead


@dataclasses.dataclass(frozen=True, eq=False)
class Capture:
    """A three-phase waveform capture: channels, time base and provenance.

    Parameters
    ----------
    channels : tuple of Channel
    source : SampleSource
        Sample storage; ``source.n_channels == len(channels)``.
    sample_rate_hz : float
        Sampling rate [Hz].
    start_time : datetime.datetime
        Absolute time of sample 0, timezone-aware.
    nominal_frequency_hz : float or None
        50 or 60 [Hz]; ``None`` until inferred (see `waveforms.timebase.infer_nominal_frequency`).
    nominal_voltage_v : float or None
        Declared line-to-line RMS voltage [V], if known.
    wiring : {"3-wire", "4-wire"}
    provenance : Provenance
    nameplate : waveforms.motor.nameplate.Nameplate or None
        Rated values of the motor, when the file or the user gives them.
    gaps : tuple of Gap
        Stretches of NaN samples, explicit.
    """

    channels: tuple[Channel, ...]
    source: SampleSource
    sample_rate_hz: float
    start_time: _dt.datetime
    nominal_frequency_hz: float | None = None
    nominal_voltage_v: float | None = None
    wiring: Wiring = "4-wire"
    provenance: Provenance = dataclasses.field(default_factory=Provenance)
    nameplate: Nameplate | None = None
    gaps: tuple[Gap, ...] = ()

    def __post_init__(self) -> None:
        if not self.channels:
            raise InvalidParameterError("a capture needs at least one channel")
        names = [c.name for c in self.channels]
        dup = sorted({n for n in names if names.count(n) > 1})
        if dup:
            raise InvalidParameterError(f"channel names must be unique; repeated: {dup}")
        if self.source.n_channels != len(self.channels):
            raise InvalidParameterError(
                f"sample source has {self.source.n_channels} channels but {len(self.channels)} are described"
            )
        if not (np.isfinite(self.sample_rate_hz) and self.sample_rate_hz > 0):
            raise InvalidParameterError(f"sample_rate_hz={self.sample_rate_hz!r} must be a positive number")
        if self.start_time.tzinfo is None or self.start_time.utcoffset() is None:
            raise InvalidParameterError(f"start_time={self.start_time.isoformat()} must be timezone-aware")
        if self.nominal_frequency_hz is not None and self.nominal_frequency_hz not in (50.0, 60.0):
            raise InvalidParameterError(f"nominal_frequency_hz={self.nominal_frequency_hz!r} must be 50 or 60")
        if self.wiring not in ("3-wire", "4-wire"):
            raise InvalidParameterError(f"wiring={self.wiring!r} must be '3-wire' or '4-wire'")

    # -- derived, read-only -------------------------------------------------
    @property
    def n_samples(self) -> int:
        return self.source.n_samples

    @property
    def duration_s(self) -> float:
        """Length of the capture [s] (n_samples / rate)."""
        return self.n_samples / self.sample_rate_hz

    @property
    def end_time(self) -> _dt.datetime:
        """Absolute time just after the last sample."""
        return self.start_time + _dt.timedelta(seconds=self.duration_s)

    @property
    def channel_names(self) -> tuple[str, ...]:
        return tuple(c.name for c in self.channels)

    def index_of(self, name: str) -> int:
        """Position of channel ``name``; raises `InvalidParameterError` naming the known channels."""
        for i, c in enumerate(self.channels):
            if c.name == name:
                return i
        raise InvalidParameterError(f"no channel {name!r}; channels are {list(self.channel_names)}")

    def channel(self, name: str) -> Channel:
        return self.channels[self.index_of(name)]

    def find(
        self, kind: str, conductor: str | None = None, reference: str | None = None
    ) -> tuple[Channel, ...]:
        """Channels of a kind, optionally restricted to a conductor and reference."""
        return tuple(
            c
            for c in self.channels
            if c.kind == kind
            and (conductor is None or c.conductor == conductor)
            and (reference is None or c.reference == reference)
        )

    def phase_channels(self, kind: str) -> dict[str, Channel]:
        """The A/B/C channels of a kind: line-to-neutral voltages (else line-to-line) or line currents.

        Returns a dict conductor -> Channel, possibly with fewer than three entries.
        """
        if kind == "current":
            found = self.find("current", reference="line")
        else:
            found = self.find("voltage", reference="LN") or self.find("voltage", reference="LL")
        return {c.conductor: c for c in found if c.conductor in ("A", "B", "C")}

    # -- samples ------------------------------------------------------------
    def _indices(self, channels: Sequence[str] | None) -> list[int]:
        if channels is None:
            return list(range(len(self.channels)))
        return [self.index_of(n) for n in channels]

    def read(
        self, start: int = 0, stop: int | None = None, channels: Sequence[str] | None = None
    ) -> np.ndarray:
        """Samples ``[start, stop)`` as float64, shape ``(n_channels, n)``, in V or A."""
        n = self.n_samples
        stop = n if stop is None else stop
        if not (0 <= start <= stop <= n):
            raise InvalidParameterError(f"sample range [{start}, {stop}) is outside [0, {n}]")
        return np.asarray(self.source.read(start, stop, self._indices(channels)), dtype=np.float64)

    def time_s(self, start: int = 0, stop: int | None = None) -> np.ndarray:
        """Time of samples ``[start, stop)`` in seconds from the capture start."""
        stop = self.n_samples if stop is None else stop
        return np.arange(start, stop, dtype=np.float64) / self.sample_rate_hz

    def iter_chunks(
        self,
        chunk_samples: int = 1 << 18,
        overlap_samples: int = 0,
        channels: Sequence[str] | None = None,
        start: int = 0,
        stop: int | None = None,
    ) -> Iterator[Chunk]:
        """Walk the samples in blocks of ``chunk_samples`` owned samples.

        Each `Chunk` carries up to ``overlap_samples`` extra samples on each side
        (fewer at the ends of the range), so that windowed computations near a
        block edge see the same data as in one pass over the whole capture.
        """
        if chunk_samples <= 0:
            raise InvalidParameterError(f"{chunk_samples=} must be positive")
        if overlap_samples < 0:
            raise InvalidParameterError(f"{overlap_samples=} must not be negative")
        stop = self.n_samples if stop is None else stop
        idx = self._indices(channels)
        pos = start
        while pos < stop:
            own_stop = min(pos + chunk_samples, stop)
            lo = max(start, pos - overlap_samples)
            hi = min(stop, own_stop + overlap_samples)
            data = np.asarray(self.source.read(lo, hi, idx), dtype=np.float64)
            yield Chunk(start_index=lo, data=data, lead=pos - lo, trail=hi - own_stop)
            pos = own_stop

    # -- copies ---------------------------------------------------------------
    def replace(self, **changes: Any) -> Capture:
        """A new capture with some fields changed (the samples are shared)."""
        return dataclasses.replace(self, **changes)

    def with_history(self, step: str) -> Capture:
        prov = dataclasses.replace(self.provenance, history=self.provenance.history + (step,))
        return self.replace(provenance=prov)

    def summary(self) -> dict[str, Any]:
        """Plain-data description (no samples) for JSON output."""
        return {
            "channels": [dataclasses.asdict(c) for c in self.channels],
            "n_samples": self.n_samples,
            "sample_rate_hz": self.sample_rate_hz,
            "duration_s": self.duration_s,
            "start_time": self.start_time.isoformat(),
            "end_time": self.end_time.isoformat(),
            "nominal_frequency_hz": self.nominal_frequency_hz,
            "nominal_voltage_v": self.nominal_voltage_v,
            "wiring": self.wiring,
            "gaps": [dataclasses.asdict(g) for g in self.gaps],
            "provenance": self.provenance.to_dict(),
            "nameplate": None if self.nameplate is None else self.nameplate.to_dict(),
        }


def from_arrays(
    samples: dict[str, np.ndarray] | np.ndarray,
    channels: Sequence[Channel],
    sample_rate_hz: float,
    start_time: _dt.datetime | None = None,
    **meta: Any,
) -> Capture:
    """Build an in-memory `Capture` from arrays (for the API, tests and the simulator).

    ``samples`` is either an array ``(n_channels, n_samples)`` in the order of
    ``channels`` or a dict channel name -> 1-D array.
    """
    if isinstance(samples, dict):
        missing = [c.name for c in channels if c.name not in samples]
        if missing:
            raise InvalidParameterError(f"no samples given for channels {missing}")
        lengths = {len(samples[c.name]) for c in channels}
        if len(lengths) != 1:
            raise InvalidParameterError(f"channels have different lengths: {sorted(lengths)}")
        arr = np.vstack([np.asarray(samples[c.name], dtype=np.float64) for c in channels])
    else:
        arr = np.asarray(samples, dtype=np.float64)
    if start_time is None:
        start_time = _dt.datetime(2000, 1, 1, tzinfo=_dt.timezone.utc)
    return Capture(
        channels=tuple(channels), source=ArraySource(arr), sample_rate_hz=float(sample_rate_hz),
        start_time=start_time, **meta,
    )


def standard_channels(
    voltages: str | None = "LN", currents: bool = True, neutral_current: bool = False
) -> tuple[Channel, ...]:
    """The usual channel set: Va Vb Vc (or Vab Vbc Vca) and Ia Ib Ic (and In)."""
    out: list[Channel] = []
    if voltages == "LN":
        out += [Channel(f"V{c.lower()}", "voltage", c, "LN", "V") for c in "ABC"]  # type: ignore[arg-type]
    elif voltages == "LL":
        out += [Channel(f"V{LL_PAIR[c].lower()}", "voltage", c, "LL", "V") for c in "ABC"]  # type: ignore[arg-type]
    if currents:
        out += [Channel(f"I{c.lower()}", "current", c, "line", "A") for c in "ABC"]  # type: ignore[arg-type]
    if neutral_current:
        out.append(Channel("In", "current", "N", "neutral", "A"))
    return tuple(out)
