"""Write the invented COMTRADE fixtures of this folder (run ``python tests/data/make_comtrade_fixtures.py``).

The signals are the closed forms of ``make_fixtures.wave`` (325 V peak line-to-neutral, 14 A peak
line currents, 50 Hz), stored as integer counts with the scaling written in the .cfg.
"""

from __future__ import annotations

import sys
from pathlib import Path

import numpy as np

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE.parent))

from _comtrade_support import Analog, write_comtrade

RATE_HZ = 1000.0
N = 100
PHI = (0.0, 2 * np.pi / 3, 4 * np.pi / 3)
#: Scaling written in the fixtures: voltages in kV, 0.001 kV per count (a), offset b = 0;
#: currents as CT secondary amperes, 0.0001 A per count, CT 400:5 (PS = S).
A_V_KV = 0.001
A_I_SEC = 0.0001
CT = (400.0, 5.0)


def counts() -> np.ndarray:
    t = np.arange(N) / RATE_HZ
    v = [np.rint(0.325 * np.sin(2 * np.pi * 50 * t - p) / A_V_KV) for p in PHI]
    i = [np.rint(14 * CT[1] / CT[0] * np.sin(2 * np.pi * 50 * t - p - 0.5) / A_I_SEC) for p in PHI]
    return np.vstack(v + i).astype(np.int64)


def channels() -> list[Analog]:
    return [Analog("VA", "A", "kV", A_V_KV), Analog("VB", "B", "kV", A_V_KV), Analog("VC", "C", "kV", A_V_KV),
            Analog("IA", "A", "A", A_I_SEC, primary=CT[0], secondary=CT[1], ps="S"),
            Analog("IB", "B", "A", A_I_SEC, primary=CT[0], secondary=CT[1], ps="S"),
            Analog("IC", "C", "A", A_I_SEC, primary=CT[0], secondary=CT[1], ps="S")]


def main() -> None:
    raw = counts()
    write_comtrade(HERE, "comtrade_ascii", channels(), raw, RATE_HZ, file_type="ASCII", rev="1999", n_digital=2)
    digital = np.zeros((2, N), dtype=np.uint16)
    digital[0, 40:] = 0xFFFF  # status bits set: must not leak into the analog values
    digital[1, 40:] = 0x0001
    write_comtrade(HERE, "comtrade_binary", channels(), raw, RATE_HZ, file_type="BINARY", rev="2013", n_digital=17,
                   time_code="+1", digital=digital)


if __name__ == "__main__":
    main()
