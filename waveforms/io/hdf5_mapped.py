"""Generic HDF5 importer (registry name ``"hdf5-mapped"``): a mapping file names the datasets.

For HDF5 files that are not in this project's own layout.  The mapping names
one 1-D dataset per channel and where the rate and start time are kept::

    [hdf5]
    rate_attribute = "/acq:sample_rate"   # "<object path>:<attribute>" [Hz]
    # interval_attribute = "/acq:dt"      # or the sample interval [s]
    start_attribute = "/acq:start"        # ISO 8601 with offset, or POSIX seconds (UTC)

    [channels.Va]
    dataset = "/acq/u1"
    unit = "kV"
    ratio = "11000:110"

Without ``[channels]`` entries, datasets whose last name component is a
recognised spelling (``Va``, ``UL1``, ``I1``...) are taken, with a note.  The
rate may instead come from ``[capture] sample_rate_hz`` or ``--rate``.
Nominal frequency, nominal voltage and wiring come from the options or the
``[capture]`` table and are checked as in every importer
(`waveforms.io.common.system_values`); the nominal frequency is otherwise
inferred from the samples.
Samples stay on disk (`HDF5Source`, scales applied on read).
"""

from __future__ import annotations

import datetime as _dt
from pathlib import Path
from typing import Any

import h5py
import numpy as np

from ..capture import Capture, Provenance
from ..errors import CaptureReadError, MappingError, positive_number
from ..hashing import sha256_file
from .common import EPOCH, parse_start_time, system_values
from .hdf5_native import HDF5Source, sniff_native
from .mapping import mapping_record, parse_mapping, recognise, resolve_channels
from .registry import ReadOptions


def sniff_hdf5_generic(path: Path) -> bool:
    """True for any HDF5 file not in the native layout (never raises)."""
    try:
        return bool(h5py.is_hdf5(path)) and not sniff_native(path)
    except Exception:
        return False


def _datasets(fh: h5py.File) -> list[str]:
    """Paths of all 1-D numeric datasets in the file."""
    out: list[str] = []

    def visit(name: str, obj: Any) -> None:
        if isinstance(obj, h5py.Dataset) and obj.ndim == 1 and obj.dtype.kind in "fiu":
            out.append("/" + name)

    fh.visititems(visit)
    return out


def _attribute(fh: h5py.File, spec: str, path: Path, key: str) -> Any:
    if ":" not in spec:
        raise MappingError(path, f"key hdf5.{key}", f"{spec!r} must be '<object path>:<attribute name>'")
    obj_path, attr = spec.rsplit(":", 1)
    obj_path = obj_path or "/"
    if obj_path not in fh:
        raise CaptureReadError(path, f"object {obj_path} (mapping hdf5.{key})", "not found in the file")
    attrs = fh[obj_path].attrs
    if attr not in attrs:
        raise CaptureReadError(path, f"attribute {obj_path}:{attr} (mapping hdf5.{key})",
                               f"not found; attributes there: {sorted(attrs.keys())}")
    v = attrs[attr]
    if isinstance(v, bytes):
        v = v.decode()
    if isinstance(v, np.ndarray) and v.size == 1:
        v = v.reshape(()).item()
    return v


def read_hdf5_mapped(path: Path, options: ReadOptions | None = None) -> Capture:
    """Read a generic HDF5 capture whose layout a mapping describes (lazily).

    Raises
    ------
    CaptureReadError, MappingError
        File unreadable or truncated, datasets or attributes missing, bad units.
    """
    options = options or ReadOptions()
    path = Path(path)
    mapping = parse_mapping(options.mapping, options.mapping_source or "mapping")
    try:
        fh = h5py.File(path, "r")
    except OSError as e:
        raise CaptureReadError(path, "", f"not a readable HDF5 file, truncated or damaged? ({e})") from None
    notes: list[str] = []
    with fh:
        available = _datasets(fh)
        if mapping.channels:
            headers = [str(e.get("dataset") or e.get("column") or "") for e in mapping.channels.values()]
            missing = [h for h in headers if h and h not in fh]
            if missing:
                from .mapping import suggest

                raise CaptureReadError(path, f"dataset {missing[0]}", f"not found in the file{suggest(missing[0], available)}")
            for (name, e), dpath in zip(mapping.channels.items(), headers, strict=True):
                if not dpath:
                    raise MappingError(mapping.source, f"key channels.{name}", "names no dataset; give dataset = '/path/in/file'")
                ds = fh[dpath]
                if not isinstance(ds, h5py.Dataset) or ds.ndim != 1:
                    raise CaptureReadError(path, f"dataset {dpath}", f"must be a 1-D dataset, is {getattr(ds, 'shape', 'a group')}")
                if ds.dtype.kind not in "fiu":
                    raise CaptureReadError(path, f"dataset {dpath}", f"holds {ds.dtype} values, not numbers")
            mp = mapping
            specs, map_notes = resolve_channels(headers, mp, path, "dataset", where_of=lambda h: f"dataset {h}")
        else:
            candidates = [d for d in available if recognise(d.rsplit("/", 1)[-1])]
            if not candidates:
                raise CaptureReadError(path, "", "generic HDF5 file: no dataset name is a known channel; give a mapping file "
                                       f"(--mapping) naming the datasets (1-D datasets: {', '.join(available[:12]) or 'none'})")
            by_label = {d: d.rsplit("/", 1)[-1] for d in candidates}
            specs, map_notes = resolve_channels(list(by_label.values()), mapping, path, "dataset", where_of=lambda h: f"dataset {h}")
            rev = {v: k for k, v in by_label.items()}
            specs = [type(s)(**{**s.__dict__, "source_label": rev[s.source_label]}) for s in specs]
        notes += map_notes
        lengths = {fh[s.source_label].shape[0] for s in specs}
        if len(lengths) != 1:
            raise CaptureReadError(path, "datasets " + ", ".join(s.source_label for s in specs), f"have different lengths {sorted(lengths)}")
        n = lengths.pop()
        if n < 2:
            raise CaptureReadError(path, f"dataset {specs[0].source_label}", f"holds {n} sample(s); nothing to analyse")
        h5 = mapping.hdf5
        rate = options.sample_rate_hz
        if rate is None and "rate_attribute" in h5:
            rate = positive_number(_attribute(fh, h5["rate_attribute"], path, "rate_attribute"), path, h5["rate_attribute"])
        if rate is None and "interval_attribute" in h5:
            rate = 1.0 / positive_number(_attribute(fh, h5["interval_attribute"], path, "interval_attribute"), path, h5["interval_attribute"])
        if rate is None and "sample_rate_hz" in mapping.capture:
            rate = positive_number(mapping.capture["sample_rate_hz"], mapping.source, "key capture.sample_rate_hz")
        if rate is None:
            raise CaptureReadError(path, "", "no sample rate: give [hdf5] rate_attribute / interval_attribute or [capture] sample_rate_hz in the mapping, or --rate")
        start = options.start_time
        if start is None and "start_attribute" in h5:
            v = _attribute(fh, h5["start_attribute"], path, "start_attribute")
            where = f"attribute {h5['start_attribute']}"
            if isinstance(v, (int, float, np.integer, np.floating)):
                start = EPOCH + _dt.timedelta(seconds=float(v))
            else:
                start = parse_start_time(str(v), str(path), where)
        if start is None and "start_time" in mapping.capture:
            start = parse_start_time(str(mapping.capture["start_time"]), mapping.source, "key capture.start_time")
        if start is None:
            start = EPOCH
            notes.append("absolute start time not given; start set to 1970-01-01T00:00:00+00:00 (times are relative)")
    source = HDF5Source(path, [s.source_label for s in specs], [s.scale for s in specs])
    src = options.mapping_source or "mapping"
    head = source.read(0, min(n, int(2 * rate)), range(len(specs)))  # for inferring the nominal frequency
    system = system_values(options, mapping, {}, src, path, specs, head, float(rate), notes)
    prov = Provenance(source_path=str(path), sha256=sha256_file(path), importer="hdf5-mapped",
                      mapping=mapping_record(specs, {"hdf5": dict(h5), "source": mapping.source}), notes=tuple(notes))
    return Capture(
        channels=tuple(s.channel() for s in specs), source=source, sample_rate_hz=float(rate), start_time=start,
        provenance=prov, **system,
    )
