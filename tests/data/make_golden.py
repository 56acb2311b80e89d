"""Write the stored result.json of every bundled sample (``tests/data/golden/``).

The stored copies pin the behaviour of the chain across refactors: `tests/test_golden_results.py`
compares a fresh analysis against them.  Regenerate them only when a change of a finding is intended,
and say so in the commit message::

    python tests/data/make_golden.py
"""

from __future__ import annotations

import json
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
GOLDEN = Path(__file__).resolve().parent / "golden"
SAMPLES = ROOT / "sample_captures"


def normalised(doc: dict) -> dict:
    """Drop what changes from run to run or release to release: time of writing, timings, versions."""
    doc = json.loads(json.dumps(doc).replace(str(ROOT), "<root>"))
    doc.pop("generated_at", None)
    prov = doc.get("provenance", {})
    for key in ("timings_s", "versions"):
        prov.pop(key, None)
    prov.get("software", {}).pop("version", None)
    return doc


def sample_paths() -> list[Path]:
    return sorted(p for p in SAMPLES.iterdir() if p.suffix in {".h5", ".csv"})


def fresh(path: Path) -> dict:
    from waveforms.analysis import analyze
    from waveforms.io import read_capture
    from waveforms.report.result_json import result_dict

    return normalised(result_dict(analyze(read_capture(path))))


def main() -> int:
    GOLDEN.mkdir(exist_ok=True)
    for p in sample_paths():
        (GOLDEN / f"{p.stem}.result.json").write_text(json.dumps(fresh(p), indent=1, sort_keys=True) + "\n")
        print("wrote", GOLDEN / f"{p.stem}.result.json")
    return 0


if __name__ == "__main__":
    sys.exit(main())
