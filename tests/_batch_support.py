"""Builders for the batch and recipe tests (invented test data only, no real site).

Also a recipe plugin: importing this module registers two extra stages that
the batch tests use to slow a capture down (``wait``) or to kill the worker
process analysing it (``die``).  Worker processes import it by name through a
recipe's ``plugins`` list.
"""

from __future__ import annotations

import dataclasses
import datetime as dt
import os
import signal
import time
from pathlib import Path

import numpy as np

from waveforms.capture import from_arrays, standard_channels
from waveforms.io.hdf5_native import write_native
from waveforms.recipe import Stage, get_stage, register_stage
from waveforms.settings import check_fields, setting

FS_HZ = 6400.0  # 128 samples per 50 Hz cycle
F_HZ = 50.0
PHASE_DEG = {"a": 0.0, "b": -120.0, "c": 120.0}  # A-B-C sequence


def line_currents(t: np.ndarray, i_rms: tuple[float, float, float], lag_deg: float = 30.0) -> dict[str, np.ndarray]:
    """Line currents of given RMS magnitudes at 120 degree spacing, lagging the voltages."""
    return {f"I{k}": np.sqrt(2) * r * np.cos(2 * np.pi * F_HZ * t + np.deg2rad(PHASE_DEG[k] - lag_deg))
            for k, r in zip("abc", i_rms, strict=True)}


def make_capture(path: Path, i_rms: tuple[float, float, float] = (20.0, 20.0, 20.0), seconds: float = 2.0,
                 open_c_at_s: float | None = None, v_rms: float = 230.0, start: dt.datetime | None = None) -> Path:
    """Write a native HDF5 capture: balanced 400 V supply, given line currents.

    With ``open_c_at_s`` line C opens at that instant and lines A and B then
    carry equal and opposite currents (Kirchhoff's current law with one line
    open), sqrt(3) x the balanced current (common practice, no source).
    """
    t = np.arange(int(FS_HZ * seconds)) / FS_HZ
    sig = {f"V{k}": np.sqrt(2) * v_rms * np.cos(2 * np.pi * F_HZ * t + np.deg2rad(PHASE_DEG[k])) for k in "abc"}
    sig.update(line_currents(t, i_rms))
    if open_c_at_s is not None:
        after = t >= open_c_at_s
        ia = np.sqrt(2) * np.sqrt(3) * i_rms[0] * np.cos(2 * np.pi * F_HZ * t - np.deg2rad(60.0))
        sig["Ia"] = np.where(after, ia, sig["Ia"])
        sig["Ib"] = np.where(after, -ia, sig["Ib"])
        sig["Ic"] = np.where(after, 0.0, sig["Ic"])
    cap = from_arrays(sig, standard_channels(), FS_HZ, start_time=start or dt.datetime(2031, 5, 4, 6, 0, tzinfo=dt.timezone.utc),
                      nominal_frequency_hz=F_HZ, nominal_voltage_v=400.0)
    path.parent.mkdir(parents=True, exist_ok=True)
    return write_native(cap, path)


NAMEPLATE_TOML = """[motor]
name = "{name}"
rated_power_kw = 11.0
rated_voltage_v = 400
rated_frequency_hz = 50
fla_a = {fla}
rated_speed_rpm = 1460
connection = "star"
service_factor = 1.0
locked_rotor_current_a = {lr}
"""


def write_nameplate(path: Path, fla: float = 21.0, name: str = "demo pump motor") -> Path:
    path.parent.mkdir(parents=True, exist_ok=True)
    path.write_text(NAMEPLATE_TOML.format(name=name, fla=fla, lr=7 * fla), encoding="utf-8")
    return path


# -- plugin stages (registered once per process) ---------------------------------------
def _wait(state, params) -> None:
    """Sleep up to ``seconds`` while the flag file exists (for the named captures)."""
    if params["only_if_name_contains"] not in Path(state.source).name:
        return
    flag = params["while_file_exists"]
    deadline = time.monotonic() + params["seconds"]
    while time.monotonic() < deadline and (not flag or Path(flag).exists()):
        time.sleep(0.05)


def _die(state, params) -> None:
    if params["only_if_name_contains"] and params["only_if_name_contains"] in Path(state.source).name:
        os.kill(os.getpid(), signal.SIGKILL)


@dataclasses.dataclass(frozen=True)
class WaitSettings:
    """Test only: the ``wait`` stage's keys."""

    seconds: float = setting(0.0, "sleep [s]", minimum=0.0, forward=False)
    only_if_name_contains: str = setting("", "sleep only for these files", forward=False)
    while_file_exists: str = setting("", "stop sleeping when this file is gone", forward=False)

    def __post_init__(self) -> None:
        check_fields(self)


@dataclasses.dataclass(frozen=True)
class DieSettings:
    """Test only: the ``die`` stage's keys."""

    only_if_name_contains: str = setting("", "kill the worker on these files", forward=False)

    def __post_init__(self) -> None:
        check_fields(self)


def _register() -> None:
    try:
        get_stage("wait")
    except Exception:
        register_stage(Stage("wait", "test only: sleep", _wait, settings=(WaitSettings,), needs=("import",)))
    try:
        get_stage("die")
    except Exception:
        register_stage(Stage("die", "test only: kill the worker process", _die, settings=(DieSettings,), needs=("import",)))


_register()
