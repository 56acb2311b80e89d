"""Text for the terminal: control characters shown escaped, never sent raw.

A channel name, a metadata line or a file name comes from the file being
read; printed raw, an escape sequence in it could retitle, recolour or script
the terminal.  C0 and C1 control characters, DEL and format characters
(Unicode category Cf: zero-width and bidirectional marks, the BOM) are shown
as ``\\xNN`` / ``\\uNNNN``; line breaks are kept only where asked for.
"""

from __future__ import annotations

import re
import unicodedata

_CONTROL = re.compile(r"[\x00-\x1f\x7f-\x9f\u200b-\u200f\u2028-\u202e\u2066-\u2069\ufeff]")


def _escaped(m: re.Match[str]) -> str:
    c = m.group(0)
    return f"\\x{ord(c):02x}" if ord(c) < 0x100 else f"\\u{ord(c):04x}"


def terminal_text(text: object, keep_newlines: bool = False) -> str:
    """``text`` with every control character escaped (``\\x1b``, ``\\u202e``); line breaks kept when asked."""
    s = str(text)
    if keep_newlines:
        return "\n".join(terminal_text(line) for line in s.split("\n"))
    s = _CONTROL.sub(_escaped, s)
    if any(unicodedata.category(ch) == "Cf" for ch in s):  # other format characters
        s = "".join(f"\\u{ord(ch):04x}" if unicodedata.category(ch) == "Cf" else ch for ch in s)
    return s
