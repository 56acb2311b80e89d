"""What a real logger does to the signals: phase error, gain, offset, noise, ADC.

Applied to whole arrays, in this order per channel: a delay equal to the
channel's phase error at the fundamental (cubic-spline evaluation at
``t - tau``), gain and offset, additive Gaussian noise, then an ADC of
``adc_bits`` over ``+/- range`` with rounding to the nearest code and
clipping at the end codes (common practice, no source).
"""

from __future__ import annotations

import dataclasses
import datetime as _dt

import numpy as np
from scipy.interpolate import make_interp_spline

from ..errors import InvalidParameterError


@dataclasses.dataclass(frozen=True)
class ChannelError:
    """Per-channel errors of the logger.

    Parameters
    ----------
    gain : float
        Multiplicative gain (1.0 = exact) [-].
    offset : float
        Additive offset [V or A].
    phase_deg : float
        Lag of the recorded signal at the fundamental (a pure delay) [deg].
    """

    gain: float = 1.0
    offset: float = 0.0
    phase_deg: float = 0.0


@dataclasses.dataclass(frozen=True)
class Logger:
    """Recorder settings.

    Parameters
    ----------
    sample_rate_hz : float
        [Hz]
    voltages : {"LN", "LL"}
        Record line-to-neutral voltages (against the source neutral) or line-to-line.
    currents : {"line", "winding"}
        Current clamps on the three lines, or on the windings of a delta motor (a six-lead hook-up:
        channels Ia, Ib, Ic carry the winding currents A-B, B-C, C-A, in the direction A->B, B->C, C->A).
    start_time : datetime
        Absolute, timezone-aware time of the first sample.
    adc_bits : int or None
        ADC resolution; None for no quantisation.
    voltage_range_v, current_range_a : float
        ADC full scale, +/- [V], [A].
    noise_v, noise_a : float
        RMS of the additive noise [V], [A].
    channel_errors : dict
        Channel label -> ChannelError.
    storage : {"float32", "float64"}
        Sample type of the written file.
    """

    sample_rate_hz: float = 5000.0
    voltages: str = "LN"
    currents: str = "line"
    start_time: _dt.datetime = _dt.datetime(2026, 3, 2, 8, 0, tzinfo=_dt.timezone.utc)
    adc_bits: int | None = 16
    voltage_range_v: float = 1024.0
    current_range_a: float = 1024.0
    noise_v: float = 0.0
    noise_a: float = 0.0
    channel_errors: dict[str, ChannelError] = dataclasses.field(default_factory=dict)
    storage: str = "float32"

    def __post_init__(self) -> None:
        if not (self.sample_rate_hz >= 500.0):
            raise InvalidParameterError(f"logger sample_rate_hz={self.sample_rate_hz!r} must be >= 500")
        if self.voltages not in ("LN", "LL"):
            raise InvalidParameterError(f"logger voltages={self.voltages!r} must be 'LN' or 'LL'")
        if self.currents not in ("line", "winding"):
            raise InvalidParameterError(f"logger currents={self.currents!r} must be 'line' or 'winding'")
        if self.start_time.tzinfo is None or self.start_time.utcoffset() is None:
            raise InvalidParameterError(f"logger start_time={self.start_time.isoformat()} must carry a UTC offset")
        if self.adc_bits is not None and not (isinstance(self.adc_bits, int) and 8 <= self.adc_bits <= 32):
            raise InvalidParameterError(f"logger adc_bits={self.adc_bits!r} must be a whole number 8..32")
        if not (self.voltage_range_v > 0 and self.current_range_a > 0):
            raise InvalidParameterError("logger voltage_range_v and current_range_a must be positive")
        if self.noise_v < 0 or self.noise_a < 0:
            raise InvalidParameterError("logger noise_v and noise_a must be >= 0")
        if self.storage not in ("float32", "float64"):
            raise InvalidParameterError(f"logger storage={self.storage!r} must be 'float32' or 'float64'")


def record(
    logger: Logger, signals: dict[str, np.ndarray], kinds: dict[str, str], f1_hz: float, seed: int
) -> tuple[dict[str, np.ndarray], dict[str, int]]:
    """Apply the logger's artifacts to true signals.

    Parameters
    ----------
    logger : Logger
    signals : dict
        Channel label -> true samples at ``n / sample_rate_hz`` [V or A].
    kinds : dict
        Channel label -> "voltage" or "current".
    f1_hz : float
        Fundamental frequency the phase errors refer to [Hz].
    seed : int
        Noise generator seed (reproducible captures).

    Returns
    -------
    recorded : dict
        Channel label -> recorded samples.
    clipped : dict
        Channel label -> number of samples held at an end code.
    """
    rng = np.random.default_rng(seed)
    out: dict[str, np.ndarray] = {}
    clipped: dict[str, int] = {}
    for name, x in signals.items():
        err = logger.channel_errors.get(name, ChannelError())
        n = x.size
        y = np.asarray(x, dtype=float)
        if err.phase_deg != 0.0:
            t = np.arange(n) / logger.sample_rate_hz
            tau = err.phase_deg / (360.0 * f1_hz)
            y = make_interp_spline(t, y, k=3)(t - tau)
        y = err.gain * y + err.offset
        sd = logger.noise_v if kinds[name] == "voltage" else logger.noise_a
        if sd > 0:
            y = y + rng.normal(0.0, sd, n)
        if logger.adc_bits is not None:
            full = logger.voltage_range_v if kinds[name] == "voltage" else logger.current_range_a
            lsb = full / 2.0 ** (logger.adc_bits - 1)
            lo, hi = -(2 ** (logger.adc_bits - 1)), 2 ** (logger.adc_bits - 1) - 1
            code = np.clip(np.rint(y / lsb), lo, hi)
            clipped[name] = int(np.count_nonzero((code == lo) | (code == hi)))
            y = code * lsb
        else:
            clipped[name] = 0
        out[name] = y
    return out, clipped
