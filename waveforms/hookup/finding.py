"""`Finding` (one hook-up observation) and `HookupResult` (what the stage found and did)."""

from __future__ import annotations

import dataclasses
from typing import Any

#: Checks, in the order they are reported.
CHECKS: tuple[str, ...] = ("missing_channel", "phase_sequence", "voltage_polarity", "current_assignment", "dead_sensor",
                           "scaling")
CONFIDENCE: tuple[str, ...] = ("high", "medium", "low")


@dataclasses.dataclass(frozen=True)
class Finding:
    """One hook-up finding.

    Parameters
    ----------
    check : str
        One of `CHECKS`.
    what : str
        One line in plain words ("current clamp on line B reversed").
    channels : tuple of str
        Recorded channel names concerned.
    evidence : dict
        The figures behind it: angles [deg], magnitudes [V, A], residuals [-].
    confidence : {"high", "medium", "low"}
    action : str
        What was done ("corrected: Ib = -Ib", "none: ambiguous", "warning only").
    corrects : bool
        True when the finding's correction is applied to the capture.
    label : str
        A short fixed wording for counting across files ("clamp Ib reversed"); `what` when empty.
    """

    check: str
    what: str
    channels: tuple[str, ...] = ()
    evidence: dict[str, Any] = dataclasses.field(default_factory=dict)
    confidence: str = "high"
    action: str = "warning only"
    corrects: bool = False
    short: str = ""

    @property
    def label(self) -> str:
        return self.short or self.what

    def to_dict(self) -> dict[str, Any]:
        from ..detect.event import plain

        return {"check": self.check, "what": self.what, "channels": list(self.channels), "evidence": plain(self.evidence),
                "confidence": self.confidence, "action": self.action, "corrected": self.corrects, "label": self.label}

    def quality_note(self) -> dict[str, Any]:
        """The finding as a data-quality note (`waveforms.quality` layout)."""
        return {"check": f"hookup_{self.check}", "channel": ",".join(self.channels) or None, "severity": "warning",
                "message": f"hook-up: {self.what} ({self.action}; confidence {self.confidence})"}


@dataclasses.dataclass(frozen=True)
class HookupResult:
    """What the hook-up stage found and did.

    Attributes
    ----------
    findings : tuple of Finding
    rules : tuple of ChannelRule
        The correction applied (empty: none, or ``as_recorded``).
    line_map : dict
        Conductor as analysed -> conductor as labelled in the file (differs only
        after an A-C-B relabelling).
    sequence : str
        Phase sequence as labelled: "ABC", "ACB" or "" (not determined).
    phasors_recorded, phasors_corrected : dict
        Channel -> [magnitude, angle deg] of one steady window, as recorded and as corrected (for the diagram).
    windows : dict
        How many windows were read, steady, three-phase (the checks' basis).
    as_recorded : bool
        The user asked for the file as recorded: findings reported, nothing corrected.
    ratio_note : str
        Why some sequence ratios are meaningless as recorded ("" when they are fine).
    absent_ratios : tuple of str
        Those ratios' cycle-table column names (``I2_I1_pct`` ...), left out of summaries.
    """

    findings: tuple[Finding, ...] = ()
    rules: tuple[Any, ...] = ()
    line_map: dict[str, str] = dataclasses.field(default_factory=lambda: {"A": "A", "B": "B", "C": "C"})
    sequence: str = ""
    phasors_recorded: dict[str, list[float]] = dataclasses.field(default_factory=dict)
    phasors_corrected: dict[str, list[float]] = dataclasses.field(default_factory=dict)
    windows: dict[str, Any] = dataclasses.field(default_factory=dict)
    as_recorded: bool = False
    ratio_note: str = ""
    absent_ratios: tuple[str, ...] = ()

    @property
    def corrected(self) -> bool:
        return bool(self.rules)

    @property
    def relabelled(self) -> bool:
        return any(k != v for k, v in self.line_map.items())

    def labelled(self, conductor: str | None) -> str | None:
        """The file's label of a conductor as analysed."""
        return None if conductor is None else self.line_map.get(conductor, conductor)

    def sentence(self) -> str:
        """The hook-up sentence that opens the verdict ("" without findings)."""
        if not self.findings:
            return ""
        fixed = [f.what for f in self.findings if f.corrects]
        other = [f.what for f in self.findings if not f.corrects]
        parts = []
        if fixed:
            parts.append("Hook-up corrected before analysis: " + "; ".join(fixed) + ".")
        if other:
            lead = "Hook-up found (analysed as recorded)" if self.as_recorded else "Hook-up warning (not corrected)"
            parts.append(f"{lead}: " + "; ".join(other) + ".")
        if self.relabelled and not self.as_recorded:
            parts.append("Lines are named as labelled in the file.")
        return " ".join(parts)

    def to_dict(self) -> dict[str, Any]:
        from ..detect.event import plain

        return plain({
            "findings": [f.to_dict() for f in self.findings], "corrected": self.corrected, "as_recorded": self.as_recorded,
            "correction": [r.to_dict() for r in self.rules], "line_map": dict(self.line_map), "sequence": self.sequence,
            "phasors_recorded": self.phasors_recorded, "phasors_corrected": self.phasors_corrected,
            "windows": self.windows, "ratio_note": self.ratio_note, "absent_ratios": list(self.absent_ratios),
        })
