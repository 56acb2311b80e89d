"""Matrix-shaped HDF5 importer (registry name ``"hdf5-matrix"``): one 2-D dataset holds every channel.

The commonest way acquisition scripts and numerical environments write a
multichannel record (MATLAB v7.3 ``.mat`` files are HDF5 too, with a 512-byte
user block before the HDF5 signature)::

    /data            2-D numbers, samples x channels or channels x samples
        channel_names  ["Va", "Vb", "Vc", "Ia", ...]   (or names, labels, columns...)
        units          ["V", "V", "V", "A", ...]         (optional)
        sample_rate_hz 10000                             (or fs, dt, sample_interval...)
        start_time     "2024-03-01T10:00:00+01:00"       (ISO 8601, or POSIX seconds)
    /channel_names   a companion string dataset may hold the names instead

Names are read from a string attribute of the matrix (a list, or one string
split at ``,`` ``;``), or from a companion string dataset (MATLAB ``char``
arrays included) beside it; they are recognised with the spellings of
`waveforms.io.spellings`.  Otherwise a mapping file names channels by their
index along the channel axis, counted from 1: ``[channels.Va] column = 3``.
The rate and start time are attributes of the matrix, its group or the root
(or scalar datasets beside the matrix, as MATLAB writes variables), under the
keys of `waveforms.io.metadata`; ``--rate`` / ``[capture]`` / ``[hdf5]
rate_attribute`` override them.

Orientation: the axis whose length equals the number of names holds the
channels; without names, the shorter axis does (with a note).  A square matrix
is refused unless ``[hdf5] channels_along = "rows"`` or ``"columns"`` says.

Samples stay on disk: `MatrixSource` reads a block of rows (or columns) per
request, never the whole matrix at once.
"""

from __future__ import annotations

import dataclasses
import datetime as _dt
import re
from collections.abc import Sequence
from pathlib import Path
from typing import Any

import h5py
import numpy as np

from ..capture import Capture, Provenance
from ..errors import CaptureReadError, MappingError, positive_number
from ..hashing import sha256_file
from . import metadata as md
from .common import EPOCH, one_line, parse_start_time, system_values
from .hdf5_native import sniff_native
from .mapping import is_time_header, mapping_record, parse_mapping, recognise, resolve_channels
from .registry import ReadOptions

NAME_KEYS = ("channel_names", "channelnames", "channels", "names", "labels", "columns", "column_names",
             "channel_labels", "signal_names", "signals", "variables")
UNIT_KEYS = ("units", "unit", "channel_units", "column_units")


def _text(v: Any) -> str:
    if isinstance(v, bytes):
        return v.decode("utf-8", "replace")
    if isinstance(v, np.ndarray) and v.size == 1:
        return _text(v.reshape(()).item())
    return str(v)


def _strings(v: Any, obj: Any = None) -> list[str] | None:
    """A list of names from an attribute or dataset value (None when it is not text)."""
    if obj is not None and _text(obj.attrs.get("MATLAB_class", "")) == "char":
        arr = np.asarray(v)
        if arr.ndim == 1:
            arr = arr[:, None]
        names = ["".join(chr(int(c)) for c in arr[:, j] if int(c)).strip() for j in range(arr.shape[1])]
        return _split(names)
    if isinstance(v, (str, bytes)):
        return _split([_text(v)])
    arr = np.asarray(v)
    if arr.dtype.kind in "SUO":
        return _split([_text(x) for x in arr.ravel()])
    return None


def _split(names: list[str]) -> list[str]:
    if len(names) == 1 and re.search(r"[,;\t]", names[0]):
        names = re.split(r"\s*[,;\t]\s*", names[0].strip())
    return [n.strip() for n in names]


def _is_matrix(obj: Any) -> bool:
    return (isinstance(obj, h5py.Dataset) and obj.ndim == 2 and obj.dtype.kind in "fiu" and max(obj.shape) >= 2
            and min(obj.shape) >= 1 and _text(obj.attrs.get("MATLAB_class", "")) != "char")


def _matrices(fh: h5py.File) -> list[str]:
    out: list[str] = []
    fh.visititems(lambda name, obj: out.append("/" + name) if _is_matrix(obj) else None)
    return out


def sniff_hdf5_matrix(path: Path) -> bool:
    """True for a non-native HDF5 file with a 2-D numeric dataset and no 1-D dataset named as a channel (never raises)."""
    try:
        if not h5py.is_hdf5(path) or sniff_native(path):
            return False
        with h5py.File(path, "r") as fh:
            if not _matrices(fh):
                return False
            named: list[str] = []
            fh.visititems(lambda n, o: named.append(n) if isinstance(o, h5py.Dataset) and o.ndim == 1
                          and o.shape[0] > 1 and recognise(n.rsplit("/", 1)[-1]) else None)
            return not named
    except Exception:  # noqa: BLE001 - a sniffer never raises
        return False


class MatrixSource:
    """Lazy sample source over one 2-D dataset (read-only), a block of samples per request.

    Parameters
    ----------
    path : Path
    dataset : str
        Path of the matrix in the file.
    channels_along : {"columns", "rows"}
        ``"columns"``: samples x channels; ``"rows"``: channels x samples.
    positions : sequence of int
        0-based position of each channel along the channel axis.
    scales : sequence of float
        Factor applied to each channel's raw values on read.
    """

    def __init__(self, path: Path, dataset: str, channels_along: str, positions: Sequence[int], scales: Sequence[float]) -> None:
        self.path = Path(path)
        self.dataset = dataset
        self.channels_along = channels_along
        self.positions = tuple(int(p) for p in positions)
        self.scales = np.asarray(scales, dtype=np.float64)
        self._fh: h5py.File | None = None
        shape = self._ds().shape
        self._n = int(shape[0] if channels_along == "columns" else shape[1])

    def _ds(self) -> h5py.Dataset:
        if self._fh is None or not self._fh.id.valid:
            self._fh = h5py.File(self.path, "r")
        return self._fh[self.dataset]

    def __getstate__(self) -> dict[str, Any]:  # picklable for worker processes
        state = self.__dict__.copy()
        state["_fh"] = None
        return state

    def close(self) -> None:
        if self._fh is not None and self._fh.id.valid:
            self._fh.close()
        self._fh = None

    @property
    def n_samples(self) -> int:
        return self._n

    @property
    def n_channels(self) -> int:
        return len(self.positions)

    def read(self, start: int, stop: int, channel_indices: Sequence[int]) -> np.ndarray:
        idx = [self.positions[i] for i in channel_indices]
        if stop <= start or not idx:
            return np.empty((len(idx), max(stop - start, 0)))
        lo, hi = min(idx), max(idx) + 1  # one hyperslab over the channels asked for, then pick
        ds = self._ds()
        try:
            if self.channels_along == "columns":
                block = ds[start:stop, lo:hi].T
            else:
                block = ds[lo:hi, start:stop]
        except (OSError, ValueError) as e:
            raise CaptureReadError(self.path, f"dataset {self.dataset}, samples {start}-{stop}", f"cannot be read ({one_line(str(e))})") from None
        out = np.asarray(block, dtype=np.float64)[[i - lo for i in idx]]
        return out * self.scales[list(channel_indices)][:, None]


def _names_of(fh: h5py.File, ds: h5py.Dataset, keys: Sequence[str]) -> tuple[list[str] | None, str]:
    """Names (or units) from an attribute of the matrix, or a companion dataset beside it or at the root."""
    for k, v in ds.attrs.items():
        if k.lower() in keys and (names := _strings(v)) is not None:
            return names, f"attribute {ds.name}:{k}"
    groups = [ds.parent] + ([fh["/"]] if ds.parent.name != "/" else [])
    for g in groups:
        for k, obj in g.items():
            if k.lower() in keys and isinstance(obj, h5py.Dataset) and obj.ndim <= 2:
                names = _strings(obj[()], obj)
                if names is not None:
                    return names, f"dataset {obj.name}"
    return None, ""


def _meta_items(fh: h5py.File, ds: h5py.Dataset) -> list[tuple[str, str, str]]:
    """Attributes of the matrix, its group and the root, and scalar datasets beside the matrix, as metadata triples."""
    items: list[tuple[str, str, str]] = []
    objs = [fh["/"]] + ([ds.parent] if ds.parent.name != "/" else []) + [ds]  # later (closer) wins
    for obj in objs:
        for k, v in obj.attrs.items():
            if md.canonical(k) is not None:
                items.append((k, _text(v), f"attribute {obj.name}:{k}"))
    for k, obj in ds.parent.items():
        if md.canonical(k) is not None and isinstance(obj, h5py.Dataset) and obj.size == 1:
            v = obj[()]
            text = "".join(chr(int(c)) for c in np.ravel(v)) if _text(obj.attrs.get("MATLAB_class", "")) == "char" else _text(np.asarray(v))
            items.insert(0, (k, text, f"dataset {obj.name}"))
    # only the closest statement of each key counts
    seen: dict[str, tuple[str, str, str]] = {}
    for it in items:
        seen[md.canonical(it[0]) or it[0]] = it
    return list(seen.values())


def _choose(fh: h5py.File, mapping: Any, path: Path) -> h5py.Dataset:
    want = mapping.hdf5.get("matrix")
    if want:
        if want not in fh or not _is_matrix(fh[want]):
            raise MappingError(mapping.source, "key hdf5.matrix", f"{want!r} is not a 2-D numeric dataset of {path}")
        return fh[want]
    found = _matrices(fh)
    if not found:
        raise CaptureReadError(path, "", "no 2-D numeric dataset (a matrix of channels) in the file")
    if len(found) > 1:
        big = [p for p in found if min(fh[p].shape) > 1]
        if len(big) == 1:
            return fh[big[0]]
        raise CaptureReadError(path, "", f"several 2-D datasets ({', '.join(found[:6])}); name one in the mapping: [hdf5] matrix = {found[0]!r}")
    return fh[found[0]]


def read_hdf5_matrix(path: Path, options: ReadOptions | None = None) -> Capture:
    """Read a matrix-shaped HDF5 capture (lazily; see the module docstring).

    Raises
    ------
    CaptureReadError, MappingError
        File unreadable, no or several matrices, names that do not fit the
        shape, an orientation that cannot be decided, unknown names, no rate.
    """
    options = options or ReadOptions()
    path = Path(path)
    mapping = parse_mapping(options.mapping, options.mapping_source or "mapping")
    if any("dataset" in e for e in mapping.channels.values()):  # 1-D datasets named: the generic layout
        from .hdf5_mapped import read_hdf5_mapped

        return read_hdf5_mapped(path, options)
    try:
        fh = h5py.File(path, "r")
    except OSError as e:
        raise CaptureReadError(path, "", f"not a readable HDF5 file, truncated or damaged? ({one_line(str(e))})") from None
    notes: list[str] = []
    with fh:
        ds = _choose(fh, mapping, path)
        dname, shape = ds.name, tuple(int(x) for x in ds.shape)
        where_m = f"dataset {dname}"
        names, names_from = _names_of(fh, ds, NAME_KEYS)
        units, units_from = _names_of(fh, ds, UNIT_KEYS)
        along = mapping.hdf5.get("channels_along")
        if along is not None and along not in ("rows", "columns"):
            raise MappingError(mapping.source, "key hdf5.channels_along", f"{along!r} must be 'rows' or 'columns'")
        if along is None:
            k = len(names) if names else None
            if k is not None and shape[1] == k and shape[0] != k:
                along = "columns"
            elif k is not None and shape[0] == k and shape[1] != k:
                along = "rows"
            elif k is not None and shape[0] != k and shape[1] != k:
                raise CaptureReadError(path, names_from, f"{k} names do not fit the matrix {dname} of shape {shape[0]} x {shape[1]}")
            elif shape[0] == shape[1]:
                raise CaptureReadError(path, where_m, f"square matrix ({shape[0]} x {shape[1]}): say [hdf5] channels_along = 'rows' or 'columns' in the mapping")
            else:
                along = "columns" if shape[1] < shape[0] else "rows"
                notes.append(f"no channel names; the shorter axis of {dname} ({min(shape)}) taken as the channels")
            if k is not None:
                notes.append(f"{dname} is {'samples x channels' if along == 'columns' else 'channels x samples'} ({shape[0]} x {shape[1]}; {k} names in {names_from})")
        n_ch = shape[1] if along == "columns" else shape[0]
        n = shape[0] if along == "columns" else shape[1]
        if not names and not mapping.channels:
            raise CaptureReadError(path, where_m, f"no channel names (no channel_names attribute or names dataset); map the {n_ch} channels "
                                   "by index in the mapping: [channels.Va] column = 1 (counted from 1), and so on")
        headers = list(names) if names else [f"column {i + 1}" for i in range(n_ch)]
        if units and len(units) == len(headers):
            headers = [h if (u.strip() in ("", "-") or "[" in h or "(" in h) else f"{h} [{u.strip()}]" for h, u in zip(headers, units)]
            notes.append(f"units from {units_from}")
        if len(set(headers)) != len(headers):
            raise CaptureReadError(path, names_from, f"channel names repeated: {sorted({h for h in headers if headers.count(h) > 1})}")
        # column indices in the mapping ([channels.Va] column = 3, counted from 1) become the names
        chans: dict[str, dict[str, Any]] = {}
        for key, e in mapping.channels.items():
            e = dict(e)
            col = e.get("column")
            if isinstance(col, int) and not isinstance(col, bool):
                if not 1 <= col <= n_ch:
                    raise MappingError(mapping.source, f"key channels.{key}.column", f"{col} is not a channel index of {dname} (1 to {n_ch}, counted from 1)")
                e["column"] = headers[col - 1]
            chans[key] = e
        time_idx = next((i for i, h in enumerate(headers) if is_time_header(h)), None)
        if mapping.time.get("none"):
            time_idx = None
        mp = dataclasses.replace(mapping, channels=chans)
        chan_headers = [h for i, h in enumerate(headers) if i != time_idx]
        specs, map_notes = resolve_channels(chan_headers, mp, path, "column", where_of=lambda h: f"{where_m}, channel {h!r}")
        notes += map_notes
        meta, meta_notes, _ = md.interpret(_meta_items(fh, ds), path)
        notes += meta_notes
        h5 = mapping.hdf5
        rate = options.sample_rate_hz
        if rate is None and "sample_rate_hz" in mapping.capture:
            rate = positive_number(mapping.capture["sample_rate_hz"], mapping.source, "key capture.sample_rate_hz")
        for key, inv in (("rate_attribute", False), ("interval_attribute", True)):
            if rate is None and key in h5:
                obj_path, _, attr = str(h5[key]).rpartition(":")
                obj = fh.get(obj_path or "/")
                if obj is None or attr not in obj.attrs:
                    raise CaptureReadError(path, f"attribute {h5[key]} (mapping hdf5.{key})", "not found in the file")
                x = positive_number(_text(obj.attrs[attr]), path, f"attribute {h5[key]}")
                rate = 1.0 / x if inv else x
        if rate is None and "sample_rate_hz" in meta:
            rate = float(meta["sample_rate_hz"])
        start = options.start_time
        if start is None and "start_time" in mapping.capture:
            start = parse_start_time(str(mapping.capture["start_time"]), mapping.source, "key capture.start_time")
        if start is None and "start_time" in meta:
            v = meta["start_time"]
            try:
                start = EPOCH + _dt.timedelta(seconds=float(v))
                notes.append(f"start time {v} read as POSIX seconds (UTC)")
            except ValueError:
                start = parse_start_time(v, str(path), "metadata start_time")
        time_record: dict[str, Any] = {}
        if time_idx is not None:
            tsrc = MatrixSource(path, dname, along, [time_idx], [1.0])
            t = tsrc.read(0, n, [0])[0]  # one channel: n floats
            tsrc.close()
            from .. import timebase
            from .mapping import time_header_unit, time_unit_factor

            t = t * time_unit_factor(mapping.time.get("unit", time_header_unit(headers[time_idx])), path, f"{where_m}, channel {headers[time_idx]!r}")
            rep = timebase.analyse_stamps(t - t[0])
            if rep.first_backwards is not None or rep.first_duplicate is not None or rep.irregular or rep.gaps:
                raise CaptureReadError(path, f"{where_m}, channel {headers[time_idx]!r}",
                                       "time stamps are not uniform (gaps, repeats or jitter): not supported for a matrix; export a uniform record or give --rate with [time] none = true")
            if rate is None:
                rate = rep.sample_rate_hz
                notes.append(f"sample rate {rate:g} Hz from the time channel {headers[time_idx]!r}")
            time_record = {"time": {"channel": headers[time_idx], "first_s": float(t[0])}}
            if start is not None:
                start = start + _dt.timedelta(seconds=float(t[0]))
        if rate is None:
            raise CaptureReadError(path, where_m, "no sample rate: add a sample_rate_hz (or fs, dt) attribute, [capture] sample_rate_hz in the mapping, or --rate")
        if n < 2:
            raise CaptureReadError(path, where_m, f"holds {n} sample(s); nothing to analyse")
        if start is None:
            start = EPOCH
            notes.append("absolute start time not given; start set to 1970-01-01T00:00:00+00:00 (times are relative)")
    positions = [headers.index(s.source_label) for s in specs]
    source = MatrixSource(path, dname, along, positions, [s.scale for s in specs])
    head = source.read(0, min(n, int(2 * rate)), range(len(specs)))
    system = system_values(options, mapping, meta, options.mapping_source or "mapping", path, specs, head, float(rate), notes)
    record = {"hdf5": {"matrix": dname, "channels_along": along, "shape": list(shape), **({"names": names_from} if names else {})},
              **time_record, "source": mapping.source if options.mapping else "recognised from the channel names"}
    prov = Provenance(source_path=str(path), sha256=sha256_file(path), importer="hdf5-matrix",
                      mapping=mapping_record(specs, record), notes=tuple(notes))
    return Capture(channels=tuple(s.channel() for s in specs), source=source, sample_rate_hz=float(rate),
                   start_time=start, provenance=prov, **system)
