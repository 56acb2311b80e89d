"""The project's own HDF5 capture layout: writer, lazy chunked reader, sniffer.

Layout (format version 1)::

    /                          file attributes
        format               = "motor-waveforms capture"
        format_version       = 1
        sample_rate_hz       float
        n_samples            int
        start_time           ISO 8601 with UTC offset, microseconds
        nominal_frequency_hz float, NaN when unknown
        nominal_voltage_v    float, NaN when unknown
        wiring               "3-wire" | "4-wire"
        provenance           JSON text (see waveforms.capture.Provenance)
        nameplate            JSON text, or "" when none
        gaps                 JSON text: [[start_index, stop_index, reason], ...]
    /channels/<name>           one 1-D dataset per channel, float64 (or float32),
                               chunked (65536 samples), shuffle + gzip level 1
        attributes: order (int, position in the capture), kind, conductor,
                    reference, unit, source_label, scale

Samples are stored in base units (V, A), NaN where missing.  The reader keeps
the file open read-only and pulls only the requested range, so memory does
not grow with the capture's length.
"""

from __future__ import annotations

import datetime as _dt
import json
import math
import os
from collections.abc import Callable, Iterable, Sequence
from pathlib import Path
from typing import Any

import h5py
import numpy as np

from ..atomic import atomic_path, same_file
from ..capture import Capture, Channel, Gap, Provenance
from ..errors import CaptureReadError, InvalidParameterError, WriteError
from ..hashing import sha256_file
from ..motor.nameplate import Nameplate  # a plain record (imports only errors, tomlfile): io may use it
from .common import check_sample_rate, parse_start_time
from .registry import ReadOptions

FORMAT_NAME = "motor-waveforms capture"
FORMAT_VERSION = 1
CHUNK_SAMPLES = 65536


# -- reading ---------------------------------------------------------------------
class HDF5Source:
    """Lazy sample source over datasets of an open HDF5 file (read-only).

    Parameters
    ----------
    path : Path
    dataset_paths : sequence of str
        One 1-D dataset per channel, equal lengths.
    scales : sequence of float, optional
        Factor applied to each dataset's raw values on read (generic files).
    """

    def __init__(self, path: Path, dataset_paths: Sequence[str], scales: Sequence[float] | None = None) -> None:
        self.path = Path(path)
        self.dataset_paths = tuple(dataset_paths)
        self.scales = tuple(scales) if scales is not None else (1.0,) * len(self.dataset_paths)
        self._fh: h5py.File | None = None
        fh = self._file()
        lengths = {fh[p].shape[0] for p in self.dataset_paths}
        if len(lengths) != 1:
            raise CaptureReadError(path, "datasets " + ", ".join(self.dataset_paths), f"channels have different lengths {sorted(lengths)}")
        self._n = lengths.pop()

    def _file(self) -> h5py.File:
        if self._fh is None or not self._fh.id.valid:
            self._fh = h5py.File(self.path, "r")
        return self._fh

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
        return int(self._n)

    @property
    def n_channels(self) -> int:
        return len(self.dataset_paths)

    def read(self, start: int, stop: int, channel_indices: Sequence[int]) -> np.ndarray:
        fh = self._file()
        out = np.empty((len(channel_indices), stop - start), dtype=np.float64)
        for row, ci in enumerate(channel_indices):
            ds = fh[self.dataset_paths[ci]]
            try:
                if stop > start:
                    # into the contiguous 1-D row: ~40 % faster than a 2-D destination selection
                    ds.read_direct(out[row], np.s_[start:stop])
            except OSError as e:
                raise CaptureReadError(self.path, f"dataset {self.dataset_paths[ci]}, samples {start}-{stop}", f"cannot be read ({e})") from None
            if self.scales[ci] != 1.0:
                out[row] *= self.scales[ci]
        return out


def _attr_str(attrs: Any, key: str, default: str = "") -> str:
    v = attrs.get(key, default)
    return v.decode() if isinstance(v, bytes) else str(v)


def sniff_native(path: Path) -> bool:
    """True for an HDF5 file in this project's layout (never raises)."""
    try:
        if not h5py.is_hdf5(path):
            return False
        with h5py.File(path, "r") as fh:
            return _attr_str(fh.attrs, "format") == FORMAT_NAME
    except Exception:
        return False


def _whole(value: Any, path: Path, where: str) -> int:
    try:
        f = float(value)
    except (TypeError, ValueError):
        raise CaptureReadError(path, where, f"{value!r} is not a whole number") from None
    if not (math.isfinite(f) and f == int(f)):
        raise CaptureReadError(path, where, f"{value!r} is not a whole number")
    return int(f)


def _json_attr(a: Any, key: str, default: str, path: Path, want: type) -> Any:
    text = _attr_str(a, key, default) or default
    try:
        v = json.loads(text)
    except ValueError as e:
        raise CaptureReadError(path, f"attribute /{key}", f"not valid JSON ({e})") from None
    if not isinstance(v, want):
        raise CaptureReadError(path, f"attribute /{key}", f"must be a JSON {'object' if want is dict else 'list'}")
    return v


def _gaps(raw: list[Any], n: int, path: Path) -> tuple[Gap, ...]:
    out = []
    for i, g in enumerate(raw):
        ok = isinstance(g, list) and len(g) == 3 and all(isinstance(x, int) for x in g[:2]) and 0 <= g[0] < g[1] <= n
        if not ok:
            raise CaptureReadError(path, f"attribute /gaps, entry {i}", f"{str(g)[:80]} is not [start, stop, reason] within 0-{n}")
        out.append(Gap(int(g[0]), int(g[1]), str(g[2])))
    return tuple(out)


def _check_dataset(fh: h5py.File, name: str, path: Path) -> Any:
    """The dataset /channels/NAME after checking it is a real, 1-D, numeric dataset (links are not followed)."""
    where = f"dataset /channels/{name}"
    link = fh["channels"].get(name, getlink=True)
    if not isinstance(link, h5py.HardLink):
        raise CaptureReadError(path, where, f"is a {type(link).__name__}; links are not followed (store the samples in the file)")
    ds = fh["channels"][name]
    if not isinstance(ds, h5py.Dataset):
        raise CaptureReadError(path, where, "is a group, not a dataset")
    if ds.ndim != 1:
        raise CaptureReadError(path, where, f"must be 1-D, has shape {ds.shape}")
    if ds.dtype.kind not in "fiu":
        raise CaptureReadError(path, where, f"holds {ds.dtype} values, not numbers")
    return ds


def _check_stored(ds: Any, n: int, path: Path, name: str) -> None:
    """Refuse a dataset that declares more samples than the file stores (read back, they would be fill values)."""
    if n == 0:
        return
    where = f"dataset /channels/{name}"
    try:
        if ds.chunks is None:
            stored = ds.id.get_storage_size()
            if stored < n * ds.dtype.itemsize and ds.compression is None:
                raise CaptureReadError(path, where, f"declares {n} samples but the file stores only {stored} bytes of them "
                                                    "(never written, or truncated)")
        else:
            needed = -(-n // ds.chunks[0])
            have = ds.id.get_num_chunks()
            if have < needed:
                raise CaptureReadError(path, where, f"declares {n} samples but only {have} of its {needed} chunks are stored "
                                                    "(never written, or truncated)")
    except (AttributeError, TypeError):  # an h5py without these calls: not checked
        return


def read_native(path: Path, options: ReadOptions | None = None) -> Capture:
    """Open a native HDF5 capture lazily (samples stay on disk until read).

    Every attribute is checked for its type and range, every dataset for being
    a stored, 1-D, numeric array of the declared length; anything else is a
    `CaptureReadError` naming the attribute or dataset.
    """
    options = options or ReadOptions()
    if options.mapping and (options.mapping.get("channels") or options.mapping.get("ignore")):
        names = sorted(options.mapping.get("channels") or {}) + list(options.mapping.get("ignore") or [])
        raise CaptureReadError(path, f"mapping from {options.mapping_source or 'the options'}",
                               f"a native capture describes its own channels; --map/--unit/--ratio/--ignore ({', '.join(map(str, names))}) "
                               "do not apply to it (convert the source file again with the mapping instead)")
    try:
        fh = h5py.File(path, "r")
    except OSError as e:
        raise CaptureReadError(path, "", f"not a readable HDF5 file, truncated or damaged? ({e})") from None
    try:
        with fh:
            meta = _read_meta(fh, path)
    except CaptureReadError:
        raise
    except (OSError, KeyError, RuntimeError, ValueError, TypeError) as e:  # h5py on a damaged structure
        raise CaptureReadError(path, "", f"damaged HDF5 structure ({type(e).__name__}: {e})") from None
    channels, paths, rate, start, fnom, vnom, prov, gaps, plate_json, wiring = meta
    nameplate = None
    if plate_json:
        plate = json.loads(plate_json)
        nameplate = Nameplate.from_dict({k: v for k, v in plate.items() if k != "warnings"}, f"{path}:/nameplate")
    source = HDF5Source(path, paths)
    coarse = _coarse_channels(fh_path=path, channels=channels, paths=paths)
    prov = Provenance(
        source_path=str(path), sha256=sha256_file(path), importer="hdf5-native",
        mapping={**prov.mapping, **({"stored_resolution": coarse} if coarse else {})},
        notes=prov.notes + tuple(f"{k}: stored as {v['dtype']}, whole {v['unit']} from {v['range'][0]} to {v['range'][1]}" for k, v in coarse.items()),
        history=prov.history + ((f"imported from {prov.source_path} ({prov.importer}, sha256 {prov.sha256[:12]}...)",) if prov.source_path else ()),
    )
    try:
        return Capture(
            channels=tuple(channels), source=source, sample_rate_hz=rate, start_time=start,
            nominal_frequency_hz=options.nominal_frequency_hz or (None if math.isnan(fnom) else fnom),
            nominal_voltage_v=options.nominal_voltage_v or (None if math.isnan(vnom) else vnom),
            wiring=options.wiring or wiring,  # type: ignore[arg-type]
            provenance=prov, nameplate=nameplate, gaps=gaps,
        )
    except InvalidParameterError as e:
        raise CaptureReadError(path, "file attributes", str(e)) from None


#: Integer datasets of at most this many bytes per sample get a data-quality note on their resolution
#: (8 bits: 256 levels; 16-bit converters are the trade's usual floor, common practice, no source).
COARSE_ITEMSIZE = 1


def _coarse_channels(fh_path: Path, channels: list[Channel], paths: list[str]) -> dict[str, dict[str, Any]]:
    """Channels stored as small integers (int8/uint8): dtype, number of levels, step in V or A.

    The native format stores samples in V and A (the ``scale`` attribute records what was applied on
    conversion), so an int8 dataset holds whole volts or amperes from -128 to 127: a step of 1 V or 1 A.
    """
    out: dict[str, dict[str, Any]] = {}
    with h5py.File(fh_path, "r") as fh:
        for ch, p in zip(channels, paths, strict=True):
            dt = fh[p].dtype
            if dt.kind in "iu" and dt.itemsize <= COARSE_ITEMSIZE:
                out[ch.name] = {"dtype": str(dt), "levels": 2 ** (8 * dt.itemsize), "step": 1.0, "unit": ch.unit,
                               "range": [int(np.iinfo(dt).min), int(np.iinfo(dt).max)]}
    return out


def _read_meta(fh: h5py.File, path: Path) -> tuple[Any, ...]:
    a = fh.attrs
    if _attr_str(a, "format") != FORMAT_NAME:
        raise CaptureReadError(path, "attribute /format", f"not a {FORMAT_NAME!r} file; for other HDF5 layouts give a mapping file (format 'hdf5-mapped')")
    version = _whole(a.get("format_version", -1), path, "attribute /format_version")
    if version != FORMAT_VERSION:
        raise CaptureReadError(path, "attribute /format_version", f"version {version} is not supported (this program reads {FORMAT_VERSION})")
    if "channels" not in fh or not isinstance(fh["channels"], h5py.Group) or not len(fh["channels"]):
        raise CaptureReadError(path, "group /channels", "missing or empty")
    if "sample_rate_hz" not in a:
        raise CaptureReadError(path, "attribute /sample_rate_hz", "missing")
    rate = check_sample_rate(a["sample_rate_hz"], path, "attribute /sample_rate_hz")
    start_raw = a.get("start_time", "")
    if not isinstance(start_raw, (str, bytes)):
        raise CaptureReadError(path, "attribute /start_time", f"{start_raw} is not an ISO 8601 time text")
    start = parse_start_time(_attr_str(a, "start_time"), str(path), "attribute /start_time")
    names = list(fh["channels"].keys())
    datasets = {name: _check_dataset(fh, name, path) for name in names}
    order = {name: _whole(ds.attrs.get("order", 0), path, f"attribute order of dataset /channels/{name}") for name, ds in datasets.items()}
    lengths = {name: int(ds.shape[0]) for name, ds in datasets.items()}
    if len(set(lengths.values())) > 1:
        short = min(lengths, key=lengths.get)  # type: ignore[arg-type]
        raise CaptureReadError(path, f"dataset /channels/{short}", f"has {lengths[short]} samples, the others "
                                                                   f"{max(lengths.values())}: every channel must have the same length")
    n = next(iter(lengths.values()))
    if "n_samples" in a and _whole(a["n_samples"], path, "attribute /n_samples") != n:
        raise CaptureReadError(path, "attribute /n_samples", f"says {a['n_samples']} but the datasets hold {n} samples")
    channels = []
    paths = []
    for name in sorted(names, key=lambda k: order[k]):
        ds = datasets[name]
        _check_stored(ds, n, path, name)
        at = ds.attrs
        try:
            scale = float(at.get("scale", 1.0))
        except (TypeError, ValueError):
            raise CaptureReadError(path, f"attribute scale of dataset /channels/{name}", f"{at.get('scale')!r} is not a number") from None
        if not (math.isfinite(scale) and scale != 0.0):
            raise CaptureReadError(path, f"attribute scale of dataset /channels/{name}", f"{scale!r} must be a finite, non-zero number")
        try:
            channels.append(
                Channel(
                    name=name, kind=_attr_str(at, "kind"), conductor=_attr_str(at, "conductor"),  # type: ignore[arg-type]
                    reference=_attr_str(at, "reference"), unit=_attr_str(at, "unit"),  # type: ignore[arg-type]
                    source_label=_attr_str(at, "source_label"), scale=scale,
                )
            )
        except Exception as e:
            raise CaptureReadError(path, f"dataset /channels/{name}", f"bad channel attributes ({e})") from None
        paths.append(f"/channels/{name}")
    fnom = _number_attr(a, "nominal_frequency_hz", path)
    vnom = _number_attr(a, "nominal_voltage_v", path)
    if not math.isnan(vnom) and not vnom > 0:
        raise CaptureReadError(path, "attribute /nominal_voltage_v", f"{vnom!r} must be a positive line-to-line voltage [V]")
    prov_d = _json_attr(a, "provenance", "{}", path, dict)
    try:
        prov = Provenance.from_dict(prov_d)
    except (TypeError, ValueError, AttributeError) as e:
        raise CaptureReadError(path, "attribute /provenance", f"malformed ({e})") from None
    gaps = _gaps(_json_attr(a, "gaps", "[]", path, list), n, path)
    plate_json = _attr_str(a, "nameplate", "")
    if plate_json:
        _json_attr(a, "nameplate", "{}", path, dict)
    wiring = _attr_str(a, "wiring", "4-wire")
    return channels, paths, rate, start, fnom, vnom, prov, gaps, plate_json, wiring


def _number_attr(a: Any, key: str, path: Path) -> float:
    v = a.get(key, math.nan)
    try:
        return float(v)
    except (TypeError, ValueError):
        raise CaptureReadError(path, f"attribute /{key}", f"{v!r} is not a number") from None


# -- writing ---------------------------------------------------------------------
def _write_header(fh: h5py.File, capture_meta: dict[str, Any]) -> None:
    a = fh.attrs
    a["format"] = FORMAT_NAME
    a["format_version"] = FORMAT_VERSION
    for k, v in capture_meta.items():
        a[k] = v


def native_header(capture: Capture) -> dict[str, Any]:
    """The file attributes of the native layout that describe ``capture`` (also used by the streamed CSV conversion)."""
    return {
        "sample_rate_hz": float(capture.sample_rate_hz),
        "n_samples": int(capture.n_samples),
        "start_time": capture.start_time.isoformat(timespec="microseconds"),
        "nominal_frequency_hz": math.nan if capture.nominal_frequency_hz is None else float(capture.nominal_frequency_hz),
        "nominal_voltage_v": math.nan if capture.nominal_voltage_v is None else float(capture.nominal_voltage_v),
        "wiring": capture.wiring,
        "provenance": json.dumps(capture.provenance.to_dict()),
        "nameplate": "" if capture.nameplate is None else json.dumps(capture.nameplate.to_dict()),
        "gaps": json.dumps([[g.start_index, g.stop_index, g.reason] for g in capture.gaps]),
    }


def write_native(
    capture: Capture,
    path: str | os.PathLike[str],
    dtype: str = "float64",
    compression: str | None = "gzip",
    chunk_samples: int = 1 << 18,
) -> Path:
    """Write a capture in the native layout, atomically, streaming chunk by chunk.

    Parameters
    ----------
    capture : Capture
    path : path-like
        Target file; must not be the capture's own source file.
    dtype : {"float64", "float32"}
        Storage type of the samples.
    compression : {"gzip", "lzf", None}
        ``"gzip"`` (level 1, portable to every HDF5 reader) by default.
    chunk_samples : int
        Samples read from the capture per step (memory bound).
    """
    target = Path(path)
    if capture.provenance.source_path and same_file(capture.provenance.source_path, target):
        raise WriteError(f"{target}: refusing to overwrite the input capture")
    blocks = (c.owned for c in capture.iter_chunks(chunk_samples))
    return write_native_blocks(target, capture.channels, native_header(capture), blocks, capture.n_samples, dtype, compression)


def write_native_blocks(
    target: Path,
    channels: Sequence[Channel],
    meta: dict[str, Any],
    blocks: Iterable[np.ndarray],
    n_samples: int | None,
    dtype: str = "float64",
    compression: str | None = "gzip",
    finalize: Callable[[int], dict[str, Any]] | None = None,
) -> Path:
    """Write blocks of samples (each ``(n_channels, n)``) as a native capture, atomically.

    ``n_samples`` may be None when the length is not known in advance (a
    streamed CSV); datasets then grow as blocks arrive and ``meta['n_samples']``
    is set at the end.  ``finalize(n_written)``, if given, is called after the
    last block and returns file attributes to set (values known only at the
    end of a stream: the fitted rate, gaps, provenance) before the rename.
    """
    comp_opts: dict[str, Any] = {}
    if compression == "gzip":
        comp_opts = {"compression": "gzip", "compression_opts": 1, "shuffle": True}
    elif compression == "lzf":
        comp_opts = {"compression": "lzf", "shuffle": True}
    with atomic_path(target) as tmp:
        with h5py.File(tmp, "w") as fh:
            _write_header(fh, {k: v for k, v in meta.items() if k != "n_samples"})
            grp = fh.create_group("channels")
            dsets = []
            for order, ch in enumerate(channels):
                shape = (n_samples,) if n_samples is not None else (0,)
                maxshape = (n_samples,) if n_samples is not None else (None,)
                chunks = (min(CHUNK_SAMPLES, max(1, n_samples)),) if n_samples is not None else (CHUNK_SAMPLES,)
                ds = grp.create_dataset(ch.name, shape=shape, maxshape=maxshape, dtype=dtype, chunks=chunks, **comp_opts)
                ds.attrs.update({
                    "order": order, "kind": ch.kind, "conductor": ch.conductor, "reference": ch.reference,
                    "unit": ch.unit, "source_label": ch.source_label, "scale": float(ch.scale),
                })
                dsets.append(ds)
            pos = 0
            for block in blocks:
                block = np.asarray(block)
                n = block.shape[1]
                for row, ds in enumerate(dsets):
                    if n_samples is None:
                        ds.resize((pos + n,))
                    ds[pos : pos + n] = block[row]
                pos += n
            if n_samples is not None and pos != n_samples:
                raise WriteError(f"{target}: wrote {pos} samples, expected {n_samples}")
            fh.attrs["n_samples"] = pos
            if finalize is not None:
                for k, v in finalize(pos).items():
                    fh.attrs[k] = v
    return target
