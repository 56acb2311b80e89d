"""A generator of broken and hostile inputs, cut from the shipped samples (invented data only).

Each `Case` is one file (or one option, recipe, nameplate or path) and what
every command must do with it:

``refuse``
    exit 2, one line on stderr starting ``error:`` and naming the file (or
    the option), no traceback, no output written.
``mask``
    the broken samples are masked: exit 0, a data-quality note on the
    stretch, no event (open phase, swell, dip, start) built from it, strict
    JSON out.
``accept``
    a valid file in an unusual but legal spelling (BOM, CRLF, UTF-16, a long
    comment line): exit 0.

Pure behaviour checks of the package's own rules (issue 20): no external source.
"""

from __future__ import annotations

import dataclasses
import shutil
from collections.abc import Callable
from pathlib import Path

import h5py
import numpy as np

REPO = Path(__file__).resolve().parent.parent
SAMPLES = REPO / "sample_captures"
#: Seconds of each shipped sample kept in the base files (short: every command stays quick).
BASE_S = 1.0


@dataclasses.dataclass
class Case:
    name: str
    expect: str  # "refuse", "mask" or "accept"
    build: Callable[[Path], Path]  # writes the input into the folder, returns the file to run on
    #: commands it runs through (a subset for option cases)
    commands: tuple[str, ...] = ("inspect", "measure", "analyze", "convert")
    #: extra arguments per command (option cases)
    args: dict[str, list[str]] = dataclasses.field(default_factory=dict)
    #: text the one-line message must hold besides the file name (lower case)
    says: str = ""
    #: why the case is known to fail still (an expected failure, strict: it is flagged once it passes)
    known_gap: str = ""


# -- base files --------------------------------------------------------------------------------
def base_h5(folder: Path, name: str = "base.h5") -> Path:
    """The first `BASE_S` s of sample_captures/healthy_run.h5 (native HDF5), same attributes."""
    src = SAMPLES / "healthy_run.h5"
    out = folder / name
    with h5py.File(src, "r") as f, h5py.File(out, "w") as g:
        n = int(f.attrs["sample_rate_hz"] * BASE_S)
        for k, v in f.attrs.items():
            g.attrs[k] = v
        g.attrs["n_samples"] = n
        grp = g.create_group("channels")
        for ch, ds in f["channels"].items():
            d = grp.create_dataset(ch, data=ds[:n])
            for k, v in ds.attrs.items():
                d.attrs[k] = v
    return out


def base_csv(folder: Path, name: str = "base.csv") -> Path:
    """The metadata, header and first `BASE_S` s of sample_captures/dip_one_phase.csv (5 kHz)."""
    lines = (SAMPLES / "dip_one_phase.csv").read_text(encoding="utf-8").splitlines(keepends=True)
    head = [ln for ln in lines[:20] if ln.startswith("#")]
    body = lines[len(head):len(head) + 1 + int(5000 * BASE_S)]
    out = folder / name
    out.write_text("".join(head + body), encoding="utf-8")
    return out


def _csv_parts(folder: Path) -> tuple[list[str], str, list[str]]:
    text = base_csv(folder, "_src.csv").read_text(encoding="utf-8")
    (folder / "_src.csv").unlink()
    lines = text.splitlines()
    meta = [ln for ln in lines if ln.startswith("#")]
    header = lines[len(meta)]
    return meta, header, lines[len(meta) + 1:]


def _write_csv(folder: Path, name: str, meta: list[str], header: str, rows: list[str], encoding: str = "utf-8",
               newline: str = "\n") -> Path:
    out = folder / name
    out.write_bytes((newline.join(meta + [header] + rows) + newline).encode(encoding))
    return out


# -- HDF5 cases ----------------------------------------------------------------------------------
def _h5(edit: Callable[[h5py.File], None], name: str) -> Callable[[Path], Path]:
    def build(folder: Path) -> Path:
        p = base_h5(folder, name)
        with h5py.File(p, "r+") as f:
            edit(f)
        return p
    return build


def _set_attr(key: str, value: object) -> Callable[[h5py.File], None]:
    def edit(f: h5py.File) -> None:
        f.attrs[key] = value
    return edit


def _set_channel_attr(ch: str, key: str, value: object) -> Callable[[h5py.File], None]:
    def edit(f: h5py.File) -> None:
        f["channels"][ch].attrs[key] = value
    return edit


def _replace(ch: str, data: np.ndarray, keep_attrs: bool = True) -> Callable[[h5py.File], None]:
    def edit(f: h5py.File) -> None:
        attrs = dict(f["channels"][ch].attrs)
        del f["channels"][ch]
        d = f["channels"].create_dataset(ch, data=data)
        if keep_attrs:
            for k, v in attrs.items():
                d.attrs[k] = v
    return edit


def _samples(f: h5py.File, ch: str) -> np.ndarray:
    return np.asarray(f["channels"][ch][:], dtype=np.float64)


def _with(ch: str, change: Callable[[np.ndarray], np.ndarray], dtype: str = "f8") -> Callable[[h5py.File], None]:
    def edit(f: h5py.File) -> None:
        x = change(_samples(f, ch).copy()).astype(dtype)
        _replace(ch, x)(f)
    return edit


def _truncate_all(n: int) -> Callable[[h5py.File], None]:
    def edit(f: h5py.File) -> None:
        for ch in list(f["channels"]):
            _replace(ch, _samples(f, ch)[:n].astype("f4"))(f)
        f.attrs["n_samples"] = n
    return edit


def _declare_huge(f: h5py.File) -> None:
    # 2e9 samples declared, nothing stored (contiguous, never written): the file stays a few KB
    n = 2_000_000_000
    for ch in list(f["channels"]):
        attrs = dict(f["channels"][ch].attrs)
        del f["channels"][ch]
        d = f["channels"].create_dataset(ch, shape=(n,), dtype="f4")
        for k, v in attrs.items():
            d.attrs[k] = v
    f.attrs["n_samples"] = n


def _soft_loop(f: h5py.File) -> None:
    del f["channels"]["Ic"]
    f["channels"]["Ic"] = h5py.SoftLink("/channels/Ic")


def _external(f: h5py.File) -> None:
    del f["channels"]["Ic"]
    f["channels"]["Ic"] = h5py.ExternalLink("/etc/hostname", "/x")


def _string_dataset(f: h5py.File) -> None:
    n = f["channels"]["Ia"].shape[0]
    _replace("Ia", np.array([b"abc"] * n))(f)


def _two_d(f: h5py.File) -> None:
    x = _samples(f, "Ia")
    _replace("Ia", np.stack([x, x], axis=1))(f)


def _shorter(f: h5py.File) -> None:
    _replace("Ib", _samples(f, "Ib")[:-777].astype("f4"))(f)


def _no_channels(f: h5py.File) -> None:
    for ch in list(f["channels"]):
        del f["channels"][ch]


def _nan_run(x: np.ndarray) -> np.ndarray:
    x[3000:3600] = np.nan
    return x


def _inf_run(x: np.ndarray) -> np.ndarray:
    x[2000:2600:2] = np.inf
    x[2001:2600:2] = -np.inf
    return x


def _huge_values(x: np.ndarray) -> np.ndarray:
    x[4000:4400] = 1e300
    return x


def _all_nan(f: h5py.File) -> None:
    for ch in list(f["channels"]):
        _replace(ch, np.full(f["channels"][ch].shape, np.nan, dtype="f4"))(f)


def _raw_bytes(data: bytes, name: str) -> Callable[[Path], Path]:
    def build(folder: Path) -> Path:
        p = folder / name
        p.write_bytes(data)
        return p
    return build


def _truncated_h5(folder: Path) -> Path:
    p = base_h5(folder, "truncated.h5")
    data = p.read_bytes()
    p.write_bytes(data[: len(data) // 3])
    return p


def _int8_currents(f: h5py.File) -> None:
    """The line currents stored as int8 (the native format holds whole amperes: a step of 1 A, peaks of about 82 A)."""
    for ch in ("Ia", "Ib", "Ic"):
        _replace(ch, np.clip(np.rint(_samples(f, ch)), -128, 127).astype(np.int8))(f)


def _escape_label(f: h5py.File) -> None:
    f["channels"]["Ia"].attrs["source_label"] = "clamp \x1b]0;owned\x07\x1b[2J one"


# -- CSV cases -----------------------------------------------------------------------------------
def _csv(change: Callable[[list[str], str, list[str]], tuple[list[str], str, list[str]]], name: str,
         encoding: str = "utf-8", newline: str = "\n") -> Callable[[Path], Path]:
    def build(folder: Path) -> Path:
        meta, header, rows = _csv_parts(folder)
        meta, header, rows = change(meta, header, rows)
        return _write_csv(folder, name, meta, header, rows, encoding, newline)
    return build


def _rows(fn: Callable[[list[str]], list[str]]) -> Callable[[list[str], str, list[str]], tuple[list[str], str, list[str]]]:
    return lambda m, h, r: (m, h, fn(list(r)))


def _set_cell(rows: list[str], i: int, col: int, value: str) -> list[str]:
    cells = rows[i].split(",")
    cells[col] = value
    rows[i] = ",".join(cells)
    return rows


def _cells(lo: int, hi: int, col: int, value: str) -> Callable[[list[str]], list[str]]:
    def fn(rows: list[str]) -> list[str]:
        for i in range(lo, hi):
            _set_cell(rows, i, col, value)
        return rows
    return fn


def _time_col(fn: Callable[[np.ndarray], np.ndarray]) -> Callable[[list[str]], list[str]]:
    def change(rows: list[str]) -> list[str]:
        t = np.array([float(r.split(",", 1)[0]) for r in rows])
        t2 = fn(t)
        return [f"{a!r}," + r.split(",", 1)[1] for a, r in zip(t2.tolist(), rows, strict=True)]
    return change


def _gap(t: np.ndarray) -> np.ndarray:
    t = t.copy()
    t[2500:] += 3600.0
    return t


def _meta(line_fn: Callable[[list[str]], list[str]]) -> Callable[[list[str], str, list[str]], tuple[list[str], str, list[str]]]:
    return lambda m, h, r: (line_fn(list(m)), h, r)


def _replace_meta(key: str, value: str) -> Callable[[list[str]], list[str]]:
    return lambda m: [f"# {key}: {value}" if ln.startswith(f"# {key}:") else ln for ln in m]


def _drop_time(m: list[str], h: str, r: list[str]) -> tuple[list[str], str, list[str]]:
    return [ln for ln in m if "sample_rate_hz" not in ln], h.split(",", 1)[1], [x.split(",", 1)[1] for x in r]


def _many_columns(m: list[str], h: str, r: list[str]) -> tuple[list[str], str, list[str]]:
    extra = ",".join(f"x{i}" for i in range(5000))
    zeros = ",".join("0" for _ in range(5000))
    return m, h + "," + extra, [x + "," + zeros for x in r[:400]]


# -- COMTRADE cases -------------------------------------------------------------------------------
def _comtrade(edit: Callable[[list[str]], list[str]], stem: str) -> Callable[[Path], Path]:
    """A valid 0.5 s ASCII COMTRADE record (invented, IEEE C37.111-1999 layout) with its cfg lines edited."""
    def build(folder: Path) -> Path:
        from _comtrade_support import Analog, write_comtrade

        rate, n = 5000.0, 2500
        t = np.arange(n) / rate
        raw = []
        for k in range(3):
            raw.append(np.rint(3000 * np.sin(2 * np.pi * 60 * t - 2 * np.pi * k / 3)).astype(np.int64))
        for k in range(3):
            raw.append(np.rint(2000 * np.sin(2 * np.pi * 60 * t - 2 * np.pi * k / 3 - 0.5)).astype(np.int64))
        analogs = [Analog(f"V{p}", p, "V", 0.1) for p in "ABC"] + [Analog(f"I{p}", p, "A", 0.01) for p in "ABC"]
        cfg = write_comtrade(folder, stem, analogs, np.array(raw), rate)
        lines = cfg.read_bytes().decode("utf-8").split("\r\n")
        cfg.write_bytes("\r\n".join(edit(lines)).encode("utf-8"))
        return cfg
    return build


def _cfg_samp(value: str) -> Callable[[list[str]], list[str]]:
    def edit(lines: list[str]) -> list[str]:
        k = lines.index("1") + 1  # nrates = 1, then the samp,endsamp line
        lines[k] = value + "," + lines[k].split(",")[1]
        return lines
    return edit


def _cfg_field(line: int, field: int, value: str) -> Callable[[list[str]], list[str]]:
    def edit(lines: list[str]) -> list[str]:
        f = lines[line - 1].split(",")
        f[field - 1] = value
        lines[line - 1] = ",".join(f)
        return lines
    return edit


# -- other inputs --------------------------------------------------------------------------------
def _copy_sample(name: str) -> Callable[[Path], Path]:
    def build(folder: Path) -> Path:
        p = folder / name
        shutil.copy(SAMPLES / name, p)
        return p
    return build


def _recipe_file(body: str) -> Callable[[Path], Path]:
    def build(folder: Path) -> Path:
        base_h5(folder, "capture.h5")
        p = folder / "bad.recipe.toml"
        p.write_text(body, encoding="utf-8")
        return folder / "capture.h5"
    return build


def _nameplate_file(body: str) -> Callable[[Path], Path]:
    def build(folder: Path) -> Path:
        base_h5(folder, "capture.h5")
        (folder / "bad.nameplate.toml").write_text(body, encoding="utf-8")
        return folder / "capture.h5"
    return build


def _symlink_loop(folder: Path) -> Path:
    p = folder / "loop.h5"
    p.symlink_to(folder / "loop2.h5")
    (folder / "loop2.h5").symlink_to(p)
    return p


def _dir_input(folder: Path) -> Path:
    d = folder / "a_folder.h5"
    d.mkdir()
    return d


NAMEPLATE = """[motor]
name = "invented test motor"
rated_power_hp = {power}
rated_voltage_v = 460
rated_frequency_hz = 60
fla_a = {fla}
rated_speed_rpm = 1713
poles = 4
connection = "delta"
service_factor = 1.15
"""


def cases() -> list[Case]:
    """Every hostile case (file, option, recipe, nameplate and path cases)."""
    R, M, A = "refuse", "mask", "accept"
    out: list[Case] = [
        # HDF5 structure and attributes
        Case("h5_string_dataset", R, _h5(_string_dataset, "strings.h5"), says="ia"),
        Case("h5_rate_string", R, _h5(_set_attr("sample_rate_hz", "fast"), "rate_string.h5"), says="sample_rate_hz"),
        Case("h5_order_string", R, _h5(_set_channel_attr("Ia", "order", "first"), "order_string.h5"), says="order"),
        Case("h5_format_version_string", R, _h5(_set_attr("format_version", "one"), "version_string.h5"), says="format_version"),
        Case("h5_provenance_bad_json", R, _h5(_set_attr("provenance", "{not json"), "prov.h5"), says="provenance"),
        Case("h5_gaps_bad_json", R, _h5(_set_attr("gaps", "[[1,"), "gaps.h5"), says="gaps"),
        Case("h5_gaps_wrong_shape", R, _h5(_set_attr("gaps", '{"a": 1}'), "gaps_shape.h5"), says="gaps"),
        Case("h5_nameplate_bad_json", R, _h5(_set_attr("nameplate", "{bad"), "plate.h5"), says="nameplate"),
        Case("h5_nameplate_power_string", R, _h5(_set_attr("nameplate", '{"rated_power_kw": "big", "rated_voltage_v": 460,'
                                                           ' "rated_frequency_hz": 60, "fla_a": 58}'), "plate_str.h5"),
             says="rated_power_kw"),
        Case("h5_soft_link_loop", R, _h5(_soft_loop, "softloop.h5"), says="ic"),
        Case("h5_external_link", R, _h5(_external, "extlink.h5"), says="ic"),
        Case("h5_start_year_9999", R, _h5(_set_attr("start_time", "9999-12-31T23:59:59+00:00"), "y9999.h5"), says="start"),
        Case("h5_start_1e300", R, _h5(_set_attr("start_time", 1e300), "start1e300.h5"), says="start"),
        Case("h5_start_garbage", R, _h5(_set_attr("start_time", "yesterday"), "start_text.h5"), says="start"),
        Case("h5_rate_1e12", R, _h5(_set_attr("sample_rate_hz", 1e12), "rate1e12.h5"), says="sample_rate_hz"),
        Case("h5_rate_1e-9", R, _h5(_set_attr("sample_rate_hz", 1e-9), "rate1e-9.h5"), says="sample_rate_hz"),
        Case("h5_rate_1e9", R, _h5(_set_attr("sample_rate_hz", 1e9), "rate1e9.h5"), says="sample_rate_hz"),
        Case("h5_rate_negative", R, _h5(_set_attr("sample_rate_hz", -10000.0), "rate_neg.h5"), says="sample_rate_hz"),
        Case("h5_rate_nan", R, _h5(_set_attr("sample_rate_hz", float("nan")), "rate_nan.h5"), says="sample_rate_hz"),
        Case("h5_nominal_voltage_negative", R, _h5(_set_attr("nominal_voltage_v", -460.0), "vnom_neg.h5"), says="nominal_voltage_v"),
        Case("h5_scale_nan", R, _h5(_set_channel_attr("Va", "scale", float("nan")), "scale_nan.h5"), says="scale"),
        Case("h5_declares_2e9_samples", R, _h5(_declare_huge, "huge.h5"), says="samples"),
        Case("h5_mismatched_lengths", R, _h5(_shorter, "mismatch.h5"), says="ib"),
        Case("h5_two_dimensional", R, _h5(_two_d, "twod.h5"), says="ia"),
        Case("h5_no_channels", R, _h5(_no_channels, "nochannels.h5")),
        Case("h5_zero_samples", R, _h5(_truncate_all(0), "n0.h5"), commands=("measure", "analyze"), says="sample"),
        Case("h5_one_sample", R, _h5(_truncate_all(1), "n1.h5"), commands=("measure", "analyze"), says="sample"),
        Case("h5_two_samples", R, _h5(_truncate_all(2), "n2.h5"), commands=("measure", "analyze"), says="sample"),
        Case("h5_ten_samples", R, _h5(_truncate_all(10), "n10.h5"), commands=("measure", "analyze"), says="sample"),
        Case("h5_all_nan", R, _h5(_all_nan, "allnan.h5"), says="finite"),
        Case("h5_empty_file", R, _raw_bytes(b"", "empty.h5")),
        Case("h5_random_bytes", R, _raw_bytes(bytes(np.random.default_rng(20).integers(0, 256, 4096, dtype=np.uint8)), "noise.h5")),
        Case("h5_truncated", R, _truncated_h5),
        # broken samples: masked, never findings
        Case("h5_nan_run_in_Ia", M, _h5(_with("Ia", _nan_run), "nanrun.h5")),
        Case("h5_inf_run_in_Ia", M, _h5(_with("Ia", _inf_run), "infrun.h5")),
        Case("h5_1e300_in_Va", M, _h5(_with("Va", _huge_values), "huge_values.h5")),
        Case("h5_escape_in_label", A, _h5(_escape_label, "escape_label.h5")),
        Case("h5_int8_currents", A, _h5(_int8_currents, "int8.h5")),
        # delimited text
        Case("csv_empty", R, _raw_bytes(b"", "empty.csv")),
        Case("csv_header_only", R, _csv(lambda m, h, r: (m, h, []), "header_only.csv")),
        Case("csv_one_row", R, _csv(lambda m, h, r: (m, h, r[:1]), "one_row.csv"), commands=("measure", "analyze"), says="sample"),
        Case("csv_two_rows", R, _csv(lambda m, h, r: (m, h, r[:2]), "two_rows.csv"), commands=("measure", "analyze"), says="sample"),
        Case("csv_text_in_data", R, _csv(_rows(_cells(100, 101, 2, "abc")), "text_cell.csv"), says="line"),
        Case("csv_short_row", R, _csv(_rows(lambda r: r[:50] + [r[50].rsplit(",", 2)[0]] + r[51:]), "short_row.csv"), says="line"),
        Case("csv_decreasing_time", R, _csv(_rows(_time_col(lambda t: t[::-1].copy())), "decreasing.csv"), says="time"),
        Case("csv_duplicate_time", R, _csv(_rows(_time_col(lambda t: np.where(np.arange(t.size) == 10, t[9], t))), "dup_time.csv"),
             says="time"),
        Case("csv_stamps_1e9_apart", R, _csv(_rows(_time_col(lambda t: np.arange(t.size) * 1e9)), "stamps1e9.csv"), says="time"),
        Case("csv_stamps_1e18", R, _csv(_rows(_time_col(lambda t: 1e18 + np.arange(t.size) * 2e-4)), "stamps1e18.csv"), says="time"),
        Case("csv_rate_1e9", R, _csv(_rows(_time_col(lambda t: np.arange(t.size) * 1e-9)), "rate1e9.csv"), says="rate"),
        Case("csv_one_hour_gap", A, _csv(_rows(_time_col(_gap)), "gap.csv"), commands=("inspect", "analyze")),
        Case("csv_1mb_header_cell", R, _csv(lambda m, h, r: (m, h + "," + "x" * 1_000_000, r), "huge_header.csv")),
        Case("csv_5000_columns", R, _csv(_many_columns, "cols5000.csv")),
        Case("csv_control_in_header", R, _csv(lambda m, h, r: (m, h.replace("Ic (A)", "I\x1b[31mc"), r), "ctrl_header.csv")),
        Case("csv_binary_garbage", R, _raw_bytes(b"\x00\xff\x13" * 3000, "garbage.csv")),
        Case("csv_start_garbage", R, _csv(_meta(_replace_meta("start_time", "yesterday")), "start_text.csv"), says="start"),
        Case("csv_start_year_9999", R, _csv(_meta(_replace_meta("start_time", "9999-12-31T23:59:59+00:00")), "y9999.csv"),
             says="start"),
        Case("csv_nominal_voltage_negative", R, _csv(_meta(_replace_meta("nominal_voltage_v", "-460")), "vneg.csv"),
             says="nominal"),
        Case("csv_nan_run", M, _csv(_rows(_cells(1000, 1300, 4, "nan")), "nan_text.csv")),
        Case("csv_inf_run", M, _csv(_rows(_cells(1000, 1300, 4, "inf")), "inf_text.csv")),
        Case("csv_1e300", M, _csv(_rows(_cells(2000, 2200, 1, "1e300")), "e300.csv")),
        Case("csv_bom", A, _csv(lambda m, h, r: (m, h, r), "bom.csv", encoding="utf-8-sig")),
        Case("csv_crlf", A, _csv(lambda m, h, r: (m, h, r), "crlf.csv", newline="\r\n")),
        Case("csv_utf16", R, _csv(lambda m, h, r: (m, h, r), "utf16.csv", encoding="utf-16"), says="utf-16"),
        Case("csv_1mb_comment_line", A, _csv(_meta(lambda m: m + ["# note: " + "y" * 1_000_000]), "long_comment.csv")),
        Case("csv_osc_in_metadata", A, _csv(_meta(lambda m: m + ["# site: \x1b]0;owned\x07 yard"]), "osc_meta.csv")),
        # COMTRADE configuration values (refused naming the file, the cfg line and the field)
        Case("comtrade_samp_negative", R, _comtrade(_cfg_samp("-5000"), "samp_neg"), says="samp"),
        Case("comtrade_samp_nan", R, _comtrade(_cfg_samp("nan"), "samp_nan"), says="samp"),
        Case("comtrade_scale_a_nan", R, _comtrade(_cfg_field(3, 6, "nan"), "a_nan"), says="line 3, field 6 (a)"),
        Case("comtrade_offset_b_inf", R, _comtrade(_cfg_field(4, 7, "inf"), "b_inf"), says="line 4, field 7 (b)"),
        # paths
        Case("path_missing", R, lambda folder: folder / "does_not_exist.h5"),
        Case("path_directory", R, _dir_input, commands=("measure", "analyze", "convert")),
        Case("path_symlink_loop", R, _symlink_loop),
    ]
    # options on a valid capture
    opt = [
        ("opt_nominal_voltage_negative", ["--nominal-voltage", "-400"], "nominal"),
        ("opt_nominal_voltage_zero", ["--nominal-voltage", "0"], "nominal"),
        ("opt_nominal_voltage_nan", ["--nominal-voltage", "nan"], "nominal"),
        ("opt_rate_1e15", ["--rate", "1e15"], "rate"),
        ("opt_unit_unknown", ["--unit", "Va=furlong"], "do not apply"),
        ("opt_map_unknown_column", ["--map", "nope=Va"], "do not apply"),
        ("opt_ratio_unknown_channel", ["--ratio", "Iz=400:5"], "iz"),
    ]
    for name, args, says in opt:
        out.append(Case(name, R, lambda folder: base_h5(folder, "capture.h5"), commands=("inspect", "measure", "analyze", "convert"),
                        args={c: args for c in ("inspect", "measure", "analyze", "convert")}, says=says))
    for name, args, says in [("opt_motor_tau_inf", ["--motor-tau", "inf"], "motor-tau"),
                             ("opt_motor_tau_negative", ["--motor-tau", "-5"], "motor-tau"),
                             ("opt_speed_window_nan", ["--speed-window", "nan"], "speed-window")]:
        out.append(Case(name, R, lambda folder: base_h5(folder, "capture.h5"), commands=("analyze",), args={"analyze": args}, says=says))
    for name, args, says in [("opt_stem_traversal", ["--stem", "../../escaped"], "stem"),
                             ("opt_stem_absolute", ["--stem", "/tmp/waveforms-escaped"], "stem"),
                             ("opt_stem_separator", ["--stem", "a/b"], "stem")]:
        out.append(Case(name, R, lambda folder: base_h5(folder, "capture.h5"), commands=("measure",), args={"measure": args}, says=says))
    recipes = [
        ("recipe_dip_threshold_negative", "[recipe]\nname = \"bad\"\nstages = [\"import\", \"measure\", \"detect\", \"report\"]\n[detect]\ndip_threshold_pct = -50\n", "dip_threshold_pct"),
        ("recipe_threshold_db_inf", "[recipe]\nname = \"bad\"\nstages = [\"import\", \"measure\", \"speed\", \"detect\", \"report\"]\n[speed]\nthreshold_db = inf\n", "threshold_db"),
        ("recipe_unknown_stage", "[recipe]\nname = \"bad\"\nstages = [\"import\", \"teleport\"]\n", "teleport"),
        ("recipe_wrong_type", "[recipe]\nname = \"bad\"\nstages = \"import\"\n", "stages"),
        ("recipe_not_toml", "[recipe\nstages = \n", "toml"),
    ]
    for name, body, says in recipes:
        out.append(Case(name, R, _recipe_file(body), commands=("analyze",), args={"analyze": ["--recipe", "{dir}/bad.recipe.toml"]},
                        says=says))
    plates = [
        ("nameplate_power_string", NAMEPLATE.format(power='"fifty"', fla=58.4), "rated_power"),
        ("nameplate_fla_negative", NAMEPLATE.format(power=50, fla=-58.4), "fla_a"),
        ("nameplate_fla_missing", NAMEPLATE.format(power=50, fla=58.4).replace("fla_a = 58.4\n", ""), "fla_a"),
        ("nameplate_power_inf", NAMEPLATE.format(power="inf", fla=58.4), "rated_power"),
    ]
    for name, body, says in plates:
        out.append(Case(name, R, _nameplate_file(body), commands=("analyze",),
                        args={"analyze": ["--motor", "{dir}/bad.nameplate.toml"]}, says=says))
    out.append(Case("out_is_existing_file", R, lambda folder: base_h5(folder, "capture.h5"), commands=("measure", "analyze"),
                    args={"measure": ["--out", "{dir}/capture.h5/sub"], "analyze": ["--out", "{dir}/capture.h5/sub"]}))
    return out
