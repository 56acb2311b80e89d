"""A simulated RMS trend log: per-interval RMS of each phase (and P, Q, PF, frequency) of a simulated run.

A trend logger keeps no waveform, only one row per interval (a cycle, a
second, a minute): the RMS voltage and current of each phase over that
interval and often the active and reactive power, the power factor and the
frequency.  `trend_frame` computes those rows from a simulated recording
(the logger's samples, `waveforms.sim.simulate.Simulation.capture`), so a
trend analysis (`waveforms.trends`) can be checked against the simulator's
truth (`waveforms.sim.truth.events`); `write_trend_log` writes the table as
CSV or Parquet with ``<stem>.truth.json`` beside it.

Power over an interval: ``P = sum_k mean(v_k i_k)`` (line-to-neutral
voltages); ``Q = sum_k mean(v_k(t - T/4) i_k(t))``, the voltage delayed a
quarter of the fundamental period (the fundamental's reactive power; the
quarter-period shift definition, IEEE Std 1459-2010 clause 3.1.2.5);
``PF = P / S`` with ``S = sum_k V_k I_k`` (the arithmetic apparent power,
IEEE Std 1459-2010 clause 3.2.2.6).

References
----------
IEEE Std 1459-2010, Definitions for the Measurement of Electric Power Quantities
Under Sinusoidal, Nonsinusoidal, Balanced, or Unbalanced Conditions.
"""

from __future__ import annotations

import datetime as _dt
import json
import os
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from ..atomic import atomic_path, write_text
from ..errors import InvalidParameterError


def _blocks(x: np.ndarray, n: int) -> np.ndarray:
    """(channels, samples) -> (channels, blocks, n), dropping an incomplete last block."""
    m = x.shape[1] // n
    return x[:, : m * n].reshape(x.shape[0], m, n)


def trend_frame(samples_v: np.ndarray, samples_a: np.ndarray, fs_hz: float, f1_hz: float, interval_s: float,
                start_time: _dt.datetime) -> pd.DataFrame:
    """Per-interval RMS, P, Q, PF and frequency from line-to-neutral voltages and line currents.

    Parameters
    ----------
    samples_v, samples_a : ndarray (3, n)
        Voltages Va, Vb, Vc [V] and currents Ia, Ib, Ic [A].
    fs_hz : float
        Sample rate [Hz].
    f1_hz : float
        Supply frequency [Hz] (the quarter-period shift of Q and the ``frequency_hz`` column).
    interval_s : float
        Log interval [s]; a whole number of samples.
    start_time : datetime
        Clock time of the first sample.

    Returns
    -------
    DataFrame
        ``time`` (ISO 8601 at the interval start), ``Va_rms``, ``Vb_rms``, ``Vc_rms``,
        ``Ia_rms``, ``Ib_rms``, ``Ic_rms`` [V, A], ``P_kW``, ``Q_kvar``, ``PF``, ``frequency_hz``.
    """
    n = int(round(interval_s * fs_hz))
    if n < 2 or abs(n - interval_s * fs_hz) > 1e-6 * n:
        raise InvalidParameterError(f"interval_s={interval_s} is not a whole number of samples at {fs_hz} Hz")
    shift = int(round(fs_hz / f1_hz / 4))
    v, i = np.asarray(samples_v, float), np.asarray(samples_a, float)
    v_del = np.concatenate([v[:, :shift], v[:, :-shift]], axis=1)  # v(t - T/4); the first quarter period repeats
    vb, ib, vdb = _blocks(v, n), _blocks(i, n), _blocks(v_del, n)
    vr, ir = np.sqrt(np.mean(vb**2, axis=2)), np.sqrt(np.mean(ib**2, axis=2))
    p_w = np.mean(vb * ib, axis=2).sum(axis=0)
    q_var = np.mean(vdb * ib, axis=2).sum(axis=0)
    s_va = (vr * ir).sum(axis=0)
    pf = np.divide(p_w, s_va, out=np.full_like(p_w, np.nan), where=s_va > 0)
    t = pd.Timestamp(start_time) + pd.to_timedelta(np.arange(vr.shape[1]) * interval_s, unit="s")
    return pd.DataFrame({
        "time": [x.isoformat(timespec="microseconds") for x in t],
        "Va_rms": vr[0], "Vb_rms": vr[1], "Vc_rms": vr[2], "Ia_rms": ir[0], "Ib_rms": ir[1], "Ic_rms": ir[2],
        "P_kW": p_w / 1e3, "Q_kvar": q_var / 1e3, "PF": pf, "frequency_hz": np.full(vr.shape[1], float(f1_hz)),
    })


def write_trend_log(sc: Any, out: str | os.PathLike[str], interval_s: float, sim: Any = None) -> dict[str, Any]:
    """Simulate ``sc`` (unless ``sim`` is given) and write its trend log (``.csv`` or ``.parquet``) and truth JSON.

    The truth (``<stem>.truth.json``) lists the simulator's events (`waveforms.sim.truth.events`)
    in seconds from the log start, with the log interval; the scenario must record
    line-to-neutral voltages (``logger.voltages = "LN"``).
    """
    from .simulate import run
    from .truth import events as truth_events

    target = Path(out)
    if target.suffix.lower() not in (".csv", ".parquet"):
        raise InvalidParameterError(f"{target}: a trend log is written as .csv or .parquet")
    if sc.logger.voltages != "LN":
        raise InvalidParameterError(f"{sc.name}: the trend log needs line-to-neutral voltages (logger.voltages = 'LN')")
    sim = sim if sim is not None else run(sc)
    cap = sim.capture
    data = cap.read()
    idx = {c.name: k for k, c in enumerate(cap.channels)}
    v = data[[idx["Va"], idx["Vb"], idx["Vc"]]]
    i = data[[idx["Ia"], idx["Ib"], idx["Ic"]]]
    frame = trend_frame(v, i, cap.sample_rate_hz, sc.supply.f_hz, interval_s, cap.start_time)
    with atomic_path(target) as tmp:
        if target.suffix.lower() == ".csv":
            frame.to_csv(tmp, index=False, float_format="%.4f")
        else:
            frame.to_parquet(tmp, index=False)
    truth = {"format": "motor-waveforms trend truth", "scenario": sc.name, "description": sc.description,
             "file": target.name, "interval_s": interval_s, "n_rows": len(frame),
             "start_time": cap.start_time.isoformat(timespec="microseconds"),
             "events": truth_events(sim),
             "note": "invented scenario, simulated (waveforms.sim); times in seconds from the log start"}
    write_text(target.with_name(target.stem + ".truth.json"), json.dumps(truth, indent=1, allow_nan=False) + "\n")
    return truth
