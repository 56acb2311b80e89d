"""Shared helpers for the speed tests: nameplates of an invented 4-pole motor."""

from __future__ import annotations

from waveforms.motor.nameplate import Nameplate

FS_HZ = 5000.0


def plate(rotor_bars: int | None = None, rated_speed_rpm: float = 1460.0, poles: int | None = 4, f_hz: float = 50.0) -> Nameplate:
    """An invented 15 kW, 400 V, 4-pole motor (demo figures, not a real product)."""
    d = dict(rated_power_kw=15.0, rated_voltage_v=400.0, fla_a=28.0, rated_speed_rpm=rated_speed_rpm,
             rated_frequency_hz=f_hz, connection="star", service_factor=1.0, locked_rotor_current_a=180.0)
    if poles is not None:
        d["poles"] = poles
    if rotor_bars is not None:
        d["rotor_bars"] = rotor_bars
    return Nameplate.from_dict(d)
