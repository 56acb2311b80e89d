"""Per-cycle measurements of a capture: frequency, RMS and Urms(1/2), phasors,
sequence components, unbalance, harmonics, power, interval aggregation.

Entry points: `measure` (whole capture -> `Measurements`) and `iter_measure`
(block by block, bounded memory).  Column names: docs/columns.md.
"""

from .engine import Measurements, iter_measure, measure, prepare

__all__ = ["Measurements", "iter_measure", "measure", "prepare"]
