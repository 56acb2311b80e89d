"""The one list of channel-name spellings the importers recognise, and the ones they refuse.

Header conventions seen in logger and acquisition exports (common practice,
no source): phase labels ``A B C``, ``1 2 3`` and ``L1 L2 L3`` name the same
three lines (IEC 60445 letters the AC lines L1, L2, L3, from memory); ``U`` is
the IEC letter for voltage, ``V`` the North American one; a conductor and its
reference are written ``L1-N``, ``A-N``, ``AN``, ``L1-L2``, ``L12``; words
(``Voltage L1``, ``Phase A Voltage``, ``Current L1``) are common too.

`SPELLINGS` is that list.  Each entry is one rule: a pattern on the
normalised name (case, spaces and ``_ - .`` ignored, the words ``Voltage`` /
``Current`` turned into ``V`` / ``I``, ``Phase`` dropped), what it gives, and
examples, each with the channel it must give (a test reads them all).  The
table in ``docs/importing.md`` is rendered from this list by `spelling_table`
(``python -m waveforms.io.spellings`` prints it; a test keeps them equal).

Refused spellings (`REFUSALS`) are names that look like a channel but are
not an instantaneous waveform (``Ia_rms``, ``Va_thd``), reversed
line-to-line pairs (``Vba``: the sign would flip) and a bare conductor
(``L1``) whose unit does not say what it is; `refusal` gives the reason and
what to write in a mapping file instead.
"""

from __future__ import annotations

import dataclasses
import re
from collections.abc import Callable

from ..capture import LL_PAIR

#: Spelling of a voltage or current unit, with an optional prefix (``kV``, ``mA``, ``Volts``, ``ARMS``).
UNIT_RE = re.compile(r"^(?P<prefix>[kKMmuµμ]?)(?P<base>V|A|VOLTS?|AMPS?)(?:RMS)?$", re.IGNORECASE)
#: Time units of a numeric time column, in seconds.
TIME_UNITS = {"s": 1.0, "sec": 1.0, "ms": 1e-3, "us": 1e-6, "µs": 1e-6, "μs": 1e-6, "ns": 1e-9}
_DIGIT = {"1": "A", "2": "B", "3": "C", "A": "A", "B": "B", "C": "C"}
_KIND_WORDS = {"VOLTAGE": "V", "VOLTAGES": "V", "VOLTS": "V", "VOLT": "V", "CURRENT": "I", "CURRENTS": "I",
               "CURR": "I", "AMPS": "I", "AMP": "I"}
_DROP_WORDS = ("PHASE", "PH")
#: Name parts that mark a derived value (not an instantaneous sample).
_DERIVED = ("RMS", "TRMS", "AVG", "AVERAGE", "MEAN", "MIN", "MAX", "PEAK", "PK", "THD", "FUND", "ANGLE", "ANG",
            "MAG", "FREQ", "HZ", "PF", "CREST", "DC")
_DERIVED_GLUED = re.compile(r"^(?:[VUI])(?:RMS|TRMS|AVG|THD|PEAK|MAX|MIN)|(?:RMS|TRMS|AVG|THD|MEAN)$")


@dataclasses.dataclass(frozen=True)
class Recognised:
    """What a header spelling says about a channel.

    ``rule`` names the inference for the import notes when the kind was not
    written as a letter or word (``L1-N``, ``L1 [A]``); empty otherwise.
    """

    kind: str
    conductor: str
    reference: str
    unit: str | None
    rule: str = ""

    @property
    def label(self) -> str:
        return channel_label(self.kind, self.conductor, self.reference)


def channel_label(kind: str, conductor: str, reference: str) -> str:
    """The trade's short label: ``Va``, ``Vab``, ``Ia``, ``In``, ``Vn``; ``Iab`` for a delta winding current."""
    letter = "V" if kind == "voltage" else "I"
    if reference in ("LL", "winding"):
        return letter + LL_PAIR[conductor].lower()
    return letter + conductor.lower()


def split_unit(header: str) -> tuple[str, str | None]:
    """Split ``"V1 (kV)"`` / ``"IL2 [mA]"`` / ``"Va/V"`` into name and unit text (None when absent)."""
    h = header.strip()
    m = re.match(r"^(?P<name>.*?)\s*[\(\[](?P<unit>[^\)\]]*)[\)\]]\s*$", h)
    if m and m.group("name"):
        return m.group("name").strip(), m.group("unit").strip()
    m = re.match(r"^(?P<name>[^/]+?)\s*/\s*(?P<unit>[^/]+)$", h)
    if m and (UNIT_RE.match(m.group("unit").strip()) or m.group("unit").strip() in TIME_UNITS):
        return m.group("name").strip(), m.group("unit").strip()
    return h, None


def _tokens(name: str) -> list[str]:
    return [t for t in re.split(r"[\s_\-\.]+", name.strip().upper()) if t]


def normalise(name: str) -> str:
    """``"Phase A Voltage"`` -> ``"VA"``, ``"Current L1"`` -> ``"IL1"``, ``"L1-N"`` -> ``"L1N"``.

    Case, spaces and ``_ - .`` are ignored; a kind word anywhere becomes the
    leading ``V`` / ``I``; ``Phase`` is dropped.
    """
    toks = _tokens(name)
    kind = ""
    rest: list[str] = []
    for t in toks:
        if t in _KIND_WORDS and not kind:
            kind = _KIND_WORDS[t]
        elif t in _DROP_WORDS:
            continue
        else:
            rest.append(t)
    return kind + "".join(rest)


# -- the rules --------------------------------------------------------------------------
Maker = Callable[[re.Match[str], str | None], "Recognised | str | None"]


@dataclasses.dataclass(frozen=True)
class Spelling:
    """One recognised convention.

    Parameters
    ----------
    channels : str
        What it gives, for the table (``"Va Vb Vc"``).
    meaning : str
        In words, for the table and the import notes.
    pattern : str
        Regular expression on the `normalise`-d name.
    make : callable
        ``make(match, unit) -> Recognised``, or a refusal text, or None.
    examples : tuple of (str, str)
        Spellings as written in files, with the label each must give.
    """

    channels: str
    meaning: str
    pattern: str
    make: Maker
    examples: tuple[tuple[str, str], ...]

    @property
    def regex(self) -> re.Pattern[str]:
        return re.compile(self.pattern)


def _reversed(a: str, b: str) -> str:
    return (f"a reversed line-to-line pair ({a} to {b}): not guessed, the sign would flip; export "
            f"{'V' + LL_PAIR.get(b, b + a).lower()} instead, or add ignore = [{{header!r}}] to the mapping (--ignore {{header!r}})")


def _ll(rule: str) -> Maker:
    def make(m: re.Match[str], unit: str | None) -> Recognised | str | None:
        a, b = _DIGIT[m.group(1)], _DIGIT[m.group(2)]
        if a == b:
            return None
        if LL_PAIR.get(a) == a + b:
            return Recognised("voltage", a, "LL", unit, rule)
        return _reversed(a, b)
    return make


def _winding(m: re.Match[str], unit: str | None) -> Recognised | str | None:
    """A winding current ``Iab`` (A -> B); a reversed pair (``Iba``) is refused: the sign would flip."""
    a, b = _DIGIT[m.group(1)], _DIGIT[m.group(2)]
    if a == b:
        return None
    if LL_PAIR.get(a) == a + b:
        return Recognised("current", a, "winding", unit)
    return (f"a reversed winding pair ({a} to {b}): not guessed, the sign would flip; winding currents are read in "
            f"A-B-C order ({'I' + LL_PAIR.get(b, b + a).lower()}, measured {b} -> {a}), or add ignore = [{{header!r}}] to the mapping "
            f"(--ignore {{header!r}})")


def _ln(rule: str) -> Maker:
    return lambda m, unit: Recognised("voltage", _DIGIT[next(g for g in m.groups() if g)], "LN", unit, rule)


def _bare(m: re.Match[str], unit: str | None) -> Recognised | str:
    conductor = "N" if m.group(0) == "N" else _DIGIT[next(g for g in m.groups() if g)]
    u = UNIT_RE.match(unit.strip()) if unit else None
    if u is not None and u.group("base").upper().startswith("A"):
        return Recognised("current", conductor, "neutral" if conductor == "N" else "line", unit, "a conductor alone: a current by its unit")
    label = "Vn" if conductor == "N" else "V" + conductor.lower()
    what = "in V, but the reference (neutral, earth, another line) is not written" if u is not None else "with no unit"
    return (f"a conductor name only, {what}; say what it is in the mapping: [channels.{label}] "
            f"column = {{header!r}} (a voltage to {'earth' if conductor == 'N' else 'neutral'})"
            + ("" if conductor == "N" or u is not None else f" or [channels.I{conductor.lower()}] column = {{header!r}} (a current)"))


#: Every recognised spelling (first match wins).  Examples: (as written, label it gives).
SPELLINGS: tuple[Spelling, ...] = (
    Spelling("Va Vb Vc", "line-to-neutral voltage, kind letter first", r"^[VU]L?([ABC123])(?:N|0)?$", _ln(""),
             (("Va", "Va"), ("VA", "Va"), ("Van", "Va"), ("V1", "Va"), ("V1N", "Va"), ("VL1", "Va"), ("VL1N", "Va"),
              ("U1", "Va"), ("UL1", "Va"), ("UL1N", "Va"), ("U L2-N", "Vb"), ("Voltage L1", "Va"),
              ("Phase A Voltage", "Va"), ("Voltage B-N", "Vb"))),
    Spelling("Va Vb Vc", "conductor-to-neutral, no kind letter (a voltage by its reference)",
             r"^(?:L([123])|([ABC]))N$", _ln("conductor-to-neutral: a voltage"),
             (("L1-N", "Va"), ("L2-N [V]", "Vb"), ("L3N", "Vc"), ("A-N", "Va"), ("AN", "Va"), ("C-N (kV)", "Vc"))),
    Spelling("Vab Vbc Vca", "line-to-line voltage, kind letter first", r"^[VU]L?([ABC123])L?([ABC123])$", _ll(""),
             (("Vab", "Vab"), ("U12", "Vab"), ("UL12", "Vab"), ("UL1-L2", "Vab"), ("VL23", "Vbc"), ("U31", "Vca"),
              ("Voltage L1-L2", "Vab"))),
    Spelling("Vab Vbc Vca", "conductor-to-conductor, no kind letter (a voltage by its reference)",
             r"^(?:L([123])L?([123])|([ABC])([ABC]))$", lambda m, u: _ll("conductor-to-conductor: a voltage")(_Pair(m), u),
             (("L1-L2", "Vab"), ("L2-L3 [V]", "Vbc"), ("L12", "Vab"), ("L31", "Vca"), ("A-B", "Vab"), ("BC", "Vbc"))),
    Spelling("Vn", "neutral-to-earth voltage", r"^(?:[VU](?:N|NE|NG|NPE|NPG)|N(?:E|G|PE))$",
             lambda m, u: Recognised("voltage", "N", "neutral", u),
             (("VN", "Vn"), ("UN", "Vn"), ("VNE", "Vn"), ("UNE", "Vn"), ("VNG", "Vn"), ("N-PE", "Vn"), ("N-E [V]", "Vn"))),
    Spelling("Ia Ib Ic", "line current", r"^IL?([ABC123])$",
             lambda m, u: Recognised("current", _DIGIT[m.group(1)], "line", u),
             (("Ia", "Ia"), ("I1", "Ia"), ("IL1", "Ia"), ("I L1", "Ia"), ("I_c", "Ic"), ("Current L1", "Ia"),
              ("Phase B Current", "Ib"))),
    Spelling("Iab Ibc Ica", "delta winding current (six-lead hook-up), from the first terminal to the second; our own names",
             r"^IW?L?([ABC123])L?([ABC123])$", lambda m, u: _winding(m, u),
             (("Iab", "Iab"), ("Ibc", "Ibc"), ("Ica", "Ica"), ("Iw12", "Iab"), ("IW L2-L3", "Ibc"), ("I_ca", "Ica"))),
    Spelling("In", "neutral current", r"^I(?:N|LN)$",
             lambda m, u: Recognised("current", "N", "neutral", u),
             (("In", "In"), ("IN", "In"), ("ILN", "In"), ("Current N", "In"))),
    Spelling("Ia Ib Ic In", "a conductor alone, read as a current when its unit is A (kA, mA)",
             r"^(?:L([123])|([ABC])|N)$", _bare,
             (("L1 [A]", "Ia"), ("L2 (A)", "Ib"), ("L3 [kA]", "Ic"), ("N [A]", "In"))),
)


class _Pair:
    """A match of the conductor-to-conductor rule seen as two groups (``L12`` or ``AB``)."""

    def __init__(self, m: re.Match[str]) -> None:
        g = m.groups()
        self._g = (g[0], g[1]) if g[0] else (g[2], g[3])

    def group(self, i: int) -> str:
        return self._g[i - 1]


@dataclasses.dataclass(frozen=True)
class Refused:
    """A spelling that is refused, with why (for the table)."""

    what: str
    examples: tuple[str, ...]


#: What is refused, for the table (the texts come from `refusal`).
REFUSALS: tuple[Refused, ...] = (
    Refused("derived values, not waveform samples (RMS, THD, average, min/max, peak, angle, frequency)",
            ("Ia_rms", "Va RMS", "Irms1", "Va_thd", "Ib_avg", "Ic max", "V1 peak")),
    Refused("reversed line-to-line pairs (the sign would flip)", ("Vba", "U21", "L2-L1", "B-A")),
    Refused("reversed winding-current pairs (the sign would flip)", ("Iba", "Iw21")),
    Refused("a conductor alone in V or with no unit (the reference is not written)", ("L1", "L1 [V]", "A", "N")),
)


def _derived(name: str) -> str | None:
    toks = _tokens(name)
    hit = next((t for t in toks if t in _DERIVED or re.fullmatch(r"H\d{1,2}", t)), None)
    g = _DERIVED_GLUED.search("".join(toks))
    if hit is None and g is not None:
        hit = g.group(0).lstrip("VUI")
    if hit is None:
        return None
    trend = ("; a file of per-phase RMS values is an RMS trend log, read by the trend analysis "
             "(`analyze` and `batch` recognise one by its columns, docs/trends.md)") if hit in ("RMS", "TRMS") else ""
    return (f"looks like a derived value ({hit.lower()}), not an instantaneous waveform sample{trend}; export the sampled "
            "waveform, or add ignore = [{header!r}] to the mapping (--ignore {header!r})")


# -- RMS trend columns ------------------------------------------------------------------
#: RMS spellings of trend logs, each with the label it gives (the trend importer accepts exactly what
#: `refusal` turns away from a waveform capture as an RMS value).  Common practice, no source.
RMS_EXAMPLES: tuple[tuple[str, str], ...] = (
    ("Va_rms", "Va"), ("Va RMS", "Va"), ("V1 RMS", "Va"), ("Vrms L2", "Vb"), ("U3 rms [V]", "Vc"), ("VL1N_RMS", "Va"),
    ("Vab_rms", "Vab"), ("U12 RMS", "Vab"), ("Ia_rms", "Ia"), ("Irms L1", "Ia"), ("Irms2", "Ib"), ("IL3 TRMS (A)", "Ic"),
    ("Current L2 RMS", "Ib"), ("In_rms", "In"),
)
_RMS_TOKEN = re.compile(r"^(?:T?RMS)$")
_RMS_LEAD = re.compile(r"^([VUI])T?RMS(?=.)")
_RMS_TAIL = re.compile(r"(?<=.)T?RMS$")


def rms_base_name(name: str) -> str | None:
    """The channel name inside an RMS spelling (``"Irms L1"`` -> ``"I L1"``), None when no RMS mark is in it.

    Examples
    --------
    >>> rms_base_name("Va_rms"), rms_base_name("Irms2"), rms_base_name("Va")
    ('VA', 'I2', None)
    """
    toks = _tokens(name)
    out, marked = [], False
    for t in toks:
        if _RMS_TOKEN.match(t):
            marked = True
            continue
        t2 = _RMS_TAIL.sub("", _RMS_LEAD.sub(r"\1", t))
        marked = marked or t2 != t
        out.append(t2)
    return " ".join(out) if marked and out else None


def recognise_rms(header: str) -> Recognised | None:
    """The channel an RMS trend column gives (``Va_rms``, ``V1 RMS``, ``Irms L1``, ``Ia [Arms]``), else None.

    The name less its RMS mark must be a channel of `SPELLINGS` and carry no
    other derived mark (``Va_rms_max`` is not an RMS value).  A plain channel name
    whose unit says RMS (``Ia [Arms]``, ``Va (Vrms)``) counts too.
    """
    name, unit = split_unit(header)
    base = rms_base_name(name)
    if base is None:
        if unit is None or "RMS" not in unit.upper():
            return None
        base = name
    if _derived(base) is not None:
        return None
    unit_txt = None if unit is None else re.sub(r"(?i)t?rms", "", unit) or None
    out = match(base if unit_txt is None else f"{base} [{unit_txt}]")
    return out if isinstance(out, Recognised) else None


def match(header: str) -> Recognised | str | None:
    """The rule `SPELLINGS` gives for ``header``: a `Recognised`, a refusal text, or None (unknown)."""
    name, unit = split_unit(header)
    out = _derived(name)
    if out is None:
        n = normalise(name)
        for sp in SPELLINGS:
            m = sp.regex.match(n)
            if m is not None:
                out = sp.make(m, unit)
                break
    if isinstance(out, str):
        return out.replace("{header!r}", repr(header))
    return out


def recognise(header: str) -> Recognised | None:
    """Recognise a common channel spelling (``Va``, ``UL1``, ``L1-N [V]``, ``IL2 [mA]``, ``U12``...).

    Returns None for anything that is not a channel name of `SPELLINGS`, and
    for refused spellings (`refusal` says why).
    """
    out = match(header)
    return out if isinstance(out, Recognised) else None


def refusal(header: str) -> str | None:
    """Why ``header`` is refused (with what to do instead), or None when it is recognised or simply unknown."""
    out = match(header)
    return out if isinstance(out, str) else None


def spelling_table() -> str:
    """The Markdown table of `SPELLINGS` and `REFUSALS` (as in ``docs/importing.md``)."""
    rows = ["| channel | spellings (examples) | rule |", "|---|---|---|"]
    for sp in SPELLINGS:
        ex = " ".join(f"`{e}`" for e, _ in sp.examples)
        rows.append(f"| {sp.channels} | {ex} | {sp.meaning} |")
    for r in REFUSALS:
        ex = " ".join(f"`{e}`" for e in r.examples)
        rows.append(f"| refused | {ex} | {r.what} |")
    return "\n".join(rows) + "\n"


TABLE_BEGIN = "<!-- spellings table: generated by `python -m waveforms.io.spellings`; do not edit -->"
TABLE_END = "<!-- end of spellings table -->"


def render_into(doc_text: str) -> str:
    """``doc_text`` with the part between `TABLE_BEGIN` and `TABLE_END` replaced by `spelling_table`."""
    head, rest = doc_text.split(TABLE_BEGIN, 1)
    _, tail = rest.split(TABLE_END, 1)
    return f"{head}{TABLE_BEGIN}\n{spelling_table()}{TABLE_END}{tail}"


if __name__ == "__main__":  # python -m waveforms.io.spellings [--write docs/importing.md]
    import sys
    from pathlib import Path

    if len(sys.argv) == 3 and sys.argv[1] == "--write":
        p = Path(sys.argv[2])
        p.write_text(render_into(p.read_text(encoding="utf-8")), encoding="utf-8")
    else:
        sys.stdout.write(spelling_table())
