"""Warm-up run for the batch fork server (imported there only, via `waveforms.batch`).

Importing this module runs the default recipe once on a small synthetic
capture (a balanced sinusoidal set, nothing from any real site) into a
temporary folder.  Every fresh worker process forked afterwards then starts
with the caches a first capture fills (fonts and text layout of the report's
figures, FFT plans, lazily imported modules) already filled, so a fresh
process per capture costs about as much as a reused one.  Any failure here is
ignored: the warm-up only saves time.
"""

from __future__ import annotations


def _warm() -> None:
    import shutil
    import tempfile

    import numpy as np

    from .capture import from_arrays, standard_channels
    from .motor.nameplate import Nameplate
    from .recipe import default_recipe, run_recipe

    fs = 6400.0
    t = np.arange(int(fs * 1.0)) / fs
    sig = {}
    for k, deg in zip("abc", (0.0, -120.0, 120.0), strict=True):
        sig[f"V{k}"] = 325.0 * np.cos(2 * np.pi * 50 * t + np.deg2rad(deg))
        sig[f"I{k}"] = 28.0 * np.cos(2 * np.pi * 50 * t + np.deg2rad(deg - 30.0))
    cap = from_arrays(sig, standard_channels(), fs, nominal_frequency_hz=50.0, nominal_voltage_v=400.0)
    plate = Nameplate.from_dict({"rated_power_kw": 11.0, "rated_voltage_v": 400.0, "fla_a": 21.0,
                                 "rated_speed_rpm": 1460.0, "rated_frequency_hz": 50.0, "rotor_bars": 28}, "warm-up")
    tmp = tempfile.mkdtemp(prefix="waveforms-warmup-")
    try:
        run_recipe(default_recipe(), cap, nameplate=plate, out_dir=tmp)
    finally:
        shutil.rmtree(tmp, ignore_errors=True)


try:
    import warnings

    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        _warm()
except Exception:  # the warm-up is an optimisation only
    pass
