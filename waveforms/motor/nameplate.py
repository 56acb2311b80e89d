"""Motor nameplate: the rated figures a verdict is measured against.

Read from a small TOML file::

    [motor]
    rated_power_kw = 15.0         # or rated_power_hp
    rated_voltage_v = 400         # line-to-line
    rated_frequency_hz = 50
    fla_a = 28.5                  # full-load current
    rated_speed_rpm = 1460
    poles = 4                     # optional: inferred from rated speed
    connection = "delta"          # "star" or "delta"
    service_factor = 1.0
    locked_rotor_current_a = 190  # or nema_code_letter = "G"
    rotor_bars = 28               # optional

Missing figures are not invented silently: `Nameplate.warnings` lists every
default taken and every inference made.
"""

from __future__ import annotations

import dataclasses
import math
from os import PathLike
from typing import Any

from ..errors import CaptureReadError, InvalidParameterError, positive_number
from ..tomlfile import read_toml, table_or_top

HP_TO_KW = 0.745699872  # 1 hp (mechanical, 550 ft lbf/s) in kW; exact definition, NIST SP 811 appendix B.

#: NEMA MG-1 (Part 10, 10.37.2) locked-rotor kVA per horsepower by code letter,
#: lower bound included, upper bound excluded.
NEMA_CODE_LETTER_KVA_PER_HP: dict[str, tuple[float, float]] = {
    "A": (0.0, 3.15), "B": (3.15, 3.55), "C": (3.55, 4.0), "D": (4.0, 4.5), "E": (4.5, 5.0),
    "F": (5.0, 5.6), "G": (5.6, 6.3), "H": (6.3, 7.1), "J": (7.1, 8.0), "K": (8.0, 9.0),
    "L": (9.0, 10.0), "M": (10.0, 11.2), "N": (11.2, 12.5), "P": (12.5, 14.0), "R": (14.0, 16.0),
    "S": (16.0, 18.0), "T": (18.0, 20.0), "U": (20.0, 22.4), "V": (22.4, math.inf),
}

_FIELDS_FLOAT = (
    "rated_power_kw", "rated_voltage_v", "rated_frequency_hz", "fla_a", "rated_speed_rpm",
    "service_factor", "locked_rotor_current_a",
)


@dataclasses.dataclass(frozen=True)
class Nameplate:
    """Rated figures of an induction motor.

    Parameters
    ----------
    rated_power_kw : float
        Rated output [kW].
    rated_voltage_v : float
        Rated line-to-line voltage [V].
    rated_frequency_hz : float
        Rated frequency [Hz].
    fla_a : float
        Full-load (rated) line current [A].
    rated_speed_rpm : float
        Rated speed [rpm].
    poles : int
        Number of poles (2 x pole pairs).
    connection : {"star", "delta"}
    service_factor : float
    locked_rotor_current_a : float or None
        Locked-rotor line current at rated voltage [A].
    nema_code_letter : str or None
    rotor_bars : int or None
    name : str
        Free label (escaped wherever it is shown).
    warnings : tuple of str
        Defaults taken and figures inferred while loading.
    """

    rated_power_kw: float
    rated_voltage_v: float
    rated_frequency_hz: float
    fla_a: float
    rated_speed_rpm: float
    poles: int
    connection: str = "star"
    service_factor: float = 1.0
    locked_rotor_current_a: float | None = None
    nema_code_letter: str | None = None
    rotor_bars: int | None = None
    name: str = ""
    warnings: tuple[str, ...] = ()

    @property
    def pole_pairs(self) -> int:
        return self.poles // 2

    @property
    def synchronous_speed_rpm(self) -> float:
        """n_s = 120 f / poles [rpm] (common practice, no source)."""
        return 120.0 * self.rated_frequency_hz / self.poles

    @property
    def rated_slip(self) -> float:
        ns = self.synchronous_speed_rpm
        return (ns - self.rated_speed_rpm) / ns

    @property
    def rated_power_hp(self) -> float:
        return self.rated_power_kw / HP_TO_KW

    def locked_rotor_current_range_a(self) -> tuple[float, float] | None:
        """Locked-rotor current [A] given on the plate, or the range its NEMA code letter implies.

        Returns ``(low, high)`` [A]; both equal the plate's figure when one is given.

        References
        ----------
        .. [1] NEMA MG 1, Motors and Generators, Part 10, 10.37.2 "Locked-rotor
           kVA": code letters by locked-rotor kVA per horsepower, with
           I_LR = (kVA/hp) x hp x 1000 / (sqrt(3) V_LL).
        """
        # [1] 10.37.2: kVA = sqrt(3) V_LL I_LR / 1000
        if self.locked_rotor_current_a is not None:
            return (self.locked_rotor_current_a, self.locked_rotor_current_a)
        if self.nema_code_letter is None:
            return None
        lo, hi = NEMA_CODE_LETTER_KVA_PER_HP[self.nema_code_letter]
        k = self.rated_power_hp * 1000.0 / (math.sqrt(3.0) * self.rated_voltage_v)
        return (lo * k, hi * k)

    def to_dict(self) -> dict[str, Any]:
        d = dataclasses.asdict(self)
        d["warnings"] = list(self.warnings)
        return d

    @classmethod
    def from_dict(cls, d: dict[str, Any], source: str = "<nameplate>") -> Nameplate:
        """Validate and complete a nameplate mapping; see the module docstring for the keys."""
        return _build(dict(d), source)


def poles_from_rated_speed(rated_speed_rpm: float, frequency_hz: float) -> int:
    """Smallest even pole count whose synchronous speed exceeds the rated speed.

    An induction motor runs a few percent below synchronous speed, so the
    synchronous speed n_s = 120 f / poles just above the rated speed gives the
    poles (slip under 20 % accepted).

    References
    ----------
    .. [1] Fitzgerald, Kingsley & Umans, Electric Machinery, chapter on
       polyphase induction machines: n_s = 120 f_e / poles (equation number
       from memory).
    """
    if rated_speed_rpm <= 0:
        raise InvalidParameterError(f"{rated_speed_rpm=} must be positive")
    for poles in range(2, 66, 2):
        ns = 120.0 * frequency_hz / poles
        if ns > rated_speed_rpm and (ns - rated_speed_rpm) / ns < 0.2:
            return poles
    raise InvalidParameterError(
        f"rated speed {rated_speed_rpm} rpm at {frequency_hz} Hz fits no pole count with slip under 20 %"
    )


def _build(d: dict[str, Any], source: str) -> Nameplate:
    warn: list[str] = []
    d = {k: v for k, v in d.items() if v is not None}  # None (JSON null from to_dict) = not given
    known = {f.name for f in dataclasses.fields(Nameplate)} | {"rated_power_hp"}
    unknown = sorted(set(d) - known)
    if unknown:
        raise CaptureReadError(source, f"key {unknown[0]}", f"unknown nameplate key; known keys: {sorted(known - {'warnings'})}")
    if "rated_power_hp" in d:
        if "rated_power_kw" in d:
            raise CaptureReadError(source, "key rated_power_hp", "give rated_power_kw or rated_power_hp, not both")
        d["rated_power_kw"] = positive_number(d.pop("rated_power_hp"), source, "key rated_power_hp") * HP_TO_KW
    for key in _FIELDS_FLOAT:
        if key in d:
            d[key] = positive_number(d[key], source, f"key {key}")
    for key in ("rated_power_kw", "rated_voltage_v", "fla_a"):
        if key not in d:
            raise CaptureReadError(source, f"key {key}", "missing; the nameplate needs rated_power_kw (or _hp), rated_voltage_v and fla_a")
    if "rated_frequency_hz" not in d:
        d["rated_frequency_hz"] = 50.0
        warn.append("rated_frequency_hz not given: 50 Hz assumed")
    if "rated_speed_rpm" not in d and "poles" not in d:
        raise CaptureReadError(source, "key rated_speed_rpm", "missing; give rated_speed_rpm or poles")
    if "poles" in d:
        p = d["poles"]
        if not isinstance(p, int) or p < 2 or p % 2:
            raise CaptureReadError(source, "key poles", f"{p!r} must be an even whole number >= 2")
    else:
        try:
            d["poles"] = poles_from_rated_speed(d["rated_speed_rpm"], d["rated_frequency_hz"])
        except InvalidParameterError as e:
            raise CaptureReadError(source, "key rated_speed_rpm", str(e)) from None
        warn.append(f"poles not given: {d['poles']} inferred from the rated speed")
    if "rated_speed_rpm" not in d:
        ns = 120.0 * d["rated_frequency_hz"] / d["poles"]
        d["rated_speed_rpm"] = ns * 0.97
        warn.append(f"rated_speed_rpm not given: 3 % slip assumed ({d['rated_speed_rpm']:.0f} rpm)")
    else:
        ns = 120.0 * d["rated_frequency_hz"] / d["poles"]
        if not d["rated_speed_rpm"] < ns:
            raise CaptureReadError(
                source, "key rated_speed_rpm",
                f"{d['rated_speed_rpm']} rpm is not below the synchronous speed {ns:.0f} rpm of a {d['poles']}-pole motor",
            )
    conn = d.get("connection")
    if conn is None:
        d["connection"] = "star"
        warn.append("connection not given: star assumed (winding currents equal line currents)")
    elif conn not in ("star", "delta"):
        raise CaptureReadError(source, "key connection", f"{conn!r} must be 'star' or 'delta'")
    if "service_factor" not in d:
        d["service_factor"] = 1.0
        warn.append("service_factor not given: 1.0 assumed")
    letter = d.get("nema_code_letter")
    if letter is not None:
        letter = str(letter).upper()
        if letter not in NEMA_CODE_LETTER_KVA_PER_HP:
            raise CaptureReadError(source, "key nema_code_letter", f"{letter!r} is not a NEMA code letter (A-V, no I, O, Q)")
        d["nema_code_letter"] = letter
    if d.get("locked_rotor_current_a") is None and letter is None:
        warn.append("neither locked_rotor_current_a nor nema_code_letter given: locked-rotor current taken as 6 x FLA")
        d["locked_rotor_current_a"] = 6.0 * d["fla_a"]
    bars = d.get("rotor_bars")
    if bars is not None and (not isinstance(bars, int) or bars < 4):
        raise CaptureReadError(source, "key rotor_bars", f"{bars!r} must be a whole number >= 4")
    if bars is None:
        warn.append("rotor_bars not given: speed from eccentricity sidebands only")
    d["warnings"] = tuple(warn)
    d["name"] = str(d.get("name", ""))
    return Nameplate(**d)


def load_nameplate(path: str | PathLike[str]) -> Nameplate:
    """Read a nameplate TOML file (table ``[motor]`` or top-level keys)."""
    data, _ = read_toml(path, "nameplate file")
    return _build(table_or_top(data, "motor", path), str(path))
