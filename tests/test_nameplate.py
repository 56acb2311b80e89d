"""Nameplate loading: code letters, pole inference, defaults said out loud, errors naming file and key."""

import math
from pathlib import Path

import pytest

from waveforms.errors import CaptureReadError
from waveforms.motor.nameplate import (
    HP_TO_KW,
    NEMA_CODE_LETTER_KVA_PER_HP,
    Nameplate,
    load_nameplate,
    poles_from_rated_speed,
)

BASE = {"rated_power_hp": 50, "rated_voltage_v": 460, "rated_frequency_hz": 60, "fla_a": 58.4,
        "rated_speed_rpm": 1713, "connection": "delta", "service_factor": 1.15}


def test_code_letter_table_is_contiguous_and_ordered():
    # NEMA MG-1 10.37.2 (REFERENCES.md [pub]): each letter's range starts where the previous ends.
    bounds = list(NEMA_CODE_LETTER_KVA_PER_HP.values())
    assert len(bounds) == 19  # A-V without I, O, Q
    for (lo1, hi1), (lo2, _) in zip(bounds[:-1], bounds[1:], strict=True):
        assert hi1 == lo2 and lo1 < hi1


# NEMA MG-1 10.37.2 code letters, locked-rotor kVA per hp, lower bound included, upper excluded, typed
# from tests/REFERENCES.md [pub]: A below 3.15 (from 0), V from 22.4 up (no upper bound).
NEMA_MG1_10_37_2 = [
    ("A", 0.0, 3.15), ("B", 3.15, 3.55), ("C", 3.55, 4.0), ("D", 4.0, 4.5), ("E", 4.5, 5.0),
    ("F", 5.0, 5.6), ("G", 5.6, 6.3), ("H", 6.3, 7.1), ("J", 7.1, 8.0), ("K", 8.0, 9.0),
    ("L", 9.0, 10.0), ("M", 10.0, 11.2), ("N", 11.2, 12.5), ("P", 12.5, 14.0), ("R", 14.0, 16.0),
    ("S", 16.0, 18.0), ("T", 18.0, 20.0), ("U", 20.0, 22.4), ("V", 22.4, math.inf),
]


def test_code_letter_table_matches_nema_mg1_10_37_2():
    # all 19 rows of NEMA MG-1 10.37.2 (REFERENCES.md [pub]), letters in order, bounds exact
    assert len(NEMA_MG1_10_37_2) == 19
    assert list(NEMA_CODE_LETTER_KVA_PER_HP) == [row[0] for row in NEMA_MG1_10_37_2]
    for letter, lo, hi in NEMA_MG1_10_37_2:
        assert NEMA_CODE_LETTER_KVA_PER_HP[letter] == (lo, hi), letter


def test_locked_rotor_range_from_code_letter():
    # NEMA MG-1 10.37.2: I_LR = (kVA/hp) x hp x 1000 / (sqrt(3) V_LL); code G = 5.6-6.3 kVA/hp.
    plate = Nameplate.from_dict({**BASE, "nema_code_letter": "g"})
    lo, hi = plate.locked_rotor_current_range_a()
    assert lo == pytest.approx(5.6 * 50 * 1000 / (math.sqrt(3) * 460), rel=1e-12)
    assert hi == pytest.approx(6.3 * 50 * 1000 / (math.sqrt(3) * 460), rel=1e-12)
    assert plate.nema_code_letter == "G"
    # 1 hp = 745.699872 W (NIST SP 811, appendix B)
    assert plate.rated_power_kw == pytest.approx(50 * 0.745699872, rel=1e-12)
    assert HP_TO_KW == pytest.approx(0.745699872)


@pytest.mark.parametrize(
    ("rpm", "f_hz", "poles"),
    # n_s = 120 f / p (common practice, no source): 1713 rpm at 60 Hz runs below 1800 -> 4 poles
    [(1713, 60, 4), (1460, 50, 4), (2950, 50, 2), (975, 50, 6), (1175, 60, 6), (735, 50, 8)],
)
def test_poles_from_rated_speed(rpm, f_hz, poles):
    assert poles_from_rated_speed(rpm, f_hz) == poles


def test_inferred_and_defaulted_figures_are_announced():
    plate = Nameplate.from_dict({"rated_power_kw": 15, "rated_voltage_v": 400, "fla_a": 28.5, "rated_speed_rpm": 1460})
    assert plate.poles == 4
    text = " | ".join(plate.warnings)
    for expected in ("50 Hz assumed", "poles not given", "star assumed", "service_factor", "6 x FLA", "rotor_bars"):
        assert expected in text
    assert plate.locked_rotor_current_a == pytest.approx(6 * 28.5)
    assert plate.rated_slip == pytest.approx((1500 - 1460) / 1500)


def test_null_like_values_count_as_not_given():
    plate = Nameplate.from_dict({**BASE, "nema_code_letter": None, "rotor_bars": None, "locked_rotor_current_a": None})
    assert plate.locked_rotor_current_a == pytest.approx(6 * 58.4)


@pytest.mark.parametrize(
    ("text", "match"),
    [
        ('[motor]\nrated_voltage_v = 400\nfla_a = 10\nrated_speed_rpm = 1450\n', r"key rated_power_kw: missing"),
        ('[motor]\nrated_power_kw = 5\nrated_voltage_v = 400\nfla_a = "ten"\nrated_speed_rpm = 1450\n', r"key fla_a: 'ten' is not a number"),
        ('[motor]\nrated_power_kw = 5\nrated_voltage_v = 400\nfla_a = 10\nrated_speed_rpm = 1550\npoles = 4\nrated_frequency_hz = 50\n', r"key rated_speed_rpm: 1550.0 rpm is not below the synchronous speed 1500"),
        ('[motor]\nrated_power_kw = 5\nrated_voltage_v = 400\nfla_a = 10\npoles = 4\nnema_code_letter = "I"\n', r"key nema_code_letter: 'I' is not a NEMA code letter"),
        ('[motor]\nrated_power_kw = 5\nrated_voltage_v = 400\nfla_a = 10\npoles = 4\nconnection = "wye-ish"\n', r"key connection: 'wye-ish' must be 'star' or 'delta'"),
        ('[motor]\nrated_power_kw = 5\nrated_voltage_v = 400\nfla_a = 10\npoles = 4\nfla = 10\n', r"key fla: unknown nameplate key"),
        ('[motor]\nrated_power_kw = 5\nrated_voltage_v = \n', r"not valid TOML"),
    ],
)
def test_errors_name_file_and_key(tmp_path, text, match):
    path = tmp_path / "plate.toml"
    path.write_text(text)
    with pytest.raises(CaptureReadError, match=rf"plate\.toml: {match}"):
        load_nameplate(path)


def test_missing_and_non_utf8_files(tmp_path):
    with pytest.raises(CaptureReadError, match=r"nope\.toml: nameplate file not found"):
        load_nameplate(tmp_path / "nope.toml")
    bad = tmp_path / "latin.toml"
    bad.write_bytes(b'name = "Pumpe M\xfchle"\n')
    with pytest.raises(CaptureReadError, match=r"latin\.toml: byte 15: not UTF-8 text"):
        load_nameplate(bad)


def test_sample_nameplate_loads(tmp_path):
    plate = load_nameplate(Path(__file__).resolve().parent.parent / "sample_captures" / "pump2.nameplate.toml")
    assert plate.connection == "delta" and plate.poles == 4 and plate.rotor_bars == 28
    lo, hi = plate.locked_rotor_current_range_a()
    assert lo < 394 < hi  # the sample's README: 394 A = 6.28 kVA/hp, inside code G
