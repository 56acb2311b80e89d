"""The hook-up check: logger wiring errors found (and, where unambiguous, corrected) before any verdict.

One concept per module: `windows` (phasors over a few short windows),
`missing` (two-CT / open-delta), `sequence` (phase sequence, reversed voltage
channel), `sensors` (dead sensor versus open line), `assignment` (clamps on
the wrong lines or reversed), `scaling` (CT/PT ratio or nameplate), `transform`
(the declarative, lazily applied correction), `finding` (the records) and
`check` (the order they run in).  See docs/hookup.md.
"""

from .check import HookupSettings, check_hookup
from .finding import Finding, HookupResult
from .transform import ChannelRule, TransformSource, apply_rules

__all__ = ["ChannelRule", "Finding", "HookupResult", "HookupSettings", "TransformSource", "apply_rules", "check_hookup"]
