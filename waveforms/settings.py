"""Settings objects: frozen dataclasses whose fields carry their meaning and bounds, checked in ``__post_init__``.

Every settings object of the chain (`waveforms.detect.DetectParams`,
`waveforms.speed.SpeedSettings`, the recipe stages' own settings, ...)
declares each field with `setting` (default, meaning with the unit, bounds or
choices) and calls `check_fields` from ``__post_init__``; the field's bound is
then written once, and the recipe tables, the command line and the library
all meet the same check.

`check_fields` raises `SettingError`, which names the field, so a recipe can
say ``key detect.min_stall_s: -1 is below the minimum 0``.
"""

from __future__ import annotations

import dataclasses
import re
from collections.abc import Callable, Mapping
from typing import Any

from .errors import InvalidParameterError

KINDS = ("bool", "int", "float", "str", "str_list", "int_list")
_WANT = {"bool": "true or false", "int": "a whole number", "float": "a number", "str": "a string",
         "str_list": "a list of strings", "int_list": "a list of whole numbers"}


class SettingError(InvalidParameterError):
    """One field of a settings object has a bad value (``field`` and ``problem`` kept apart)."""

    def __init__(self, field: str, problem: str) -> None:
        self.field = field
        self.problem = problem
        super().__init__(f"{field}: {problem}")


@dataclasses.dataclass(frozen=True)
class Rule:
    """What a field accepts, and what it means.

    Parameters
    ----------
    doc : str
        Meaning, with the unit in brackets.
    minimum, maximum : float, optional
        Inclusive bounds for numbers.
    choices : tuple, optional
        Allowed values (of each item, for a list).
    check : callable, optional
        Extra check ``value -> problem or None`` (e.g. against a registry).
    forward : bool
        Passed on to the library function a recipe stage wraps (False: used by the stage itself).
    """

    doc: str = ""
    minimum: float | None = None
    maximum: float | None = None
    choices: tuple[Any, ...] | None = None
    check: Callable[[Any], str | None] | None = None
    forward: bool = True


def setting(default: Any, doc: str, **rule: Any) -> Any:
    """A dataclass field with its `Rule` (``minimum``, ``maximum``, ``choices``, ``check``, ``forward``)."""
    return dataclasses.field(default=default, metadata={"rule": Rule(doc=doc, **rule)})


def rule_of(cls: type, field: dataclasses.Field) -> Rule:
    """The `Rule` a field was declared with (`setting`); an empty rule for a plain field."""
    return field.metadata.get("rule") or Rule()


def kind_of(field: dataclasses.Field) -> tuple[str, bool]:
    """(kind, None allowed) of a field, from its annotation."""
    text = field.type if isinstance(field.type, str) else getattr(field.type, "__name__", str(field.type))
    optional = "None" in text
    if "tuple[int" in text or "list[int" in text:
        return "int_list", optional
    if "tuple[str" in text or "list[str" in text:
        return "str_list", optional
    for k in ("bool", "int", "float", "str"):
        if re.search(rf"\b{k}\b", text):
            return k, optional
    return "str", optional


def problem_with(kind: str, rule: Rule, value: Any) -> str | None:
    """What is wrong with ``value`` for a field of ``kind`` and ``rule``, in plain words, or None."""
    if kind == "bool":
        ok = isinstance(value, bool)
    elif kind == "int":
        ok = isinstance(value, int) and not isinstance(value, bool)
    elif kind == "float":
        ok = isinstance(value, (int, float)) and not isinstance(value, bool)
    elif kind == "str":
        ok = isinstance(value, str)
    elif kind == "str_list":
        ok = isinstance(value, (list, tuple)) and all(isinstance(v, str) for v in value)
    else:
        ok = isinstance(value, (list, tuple)) and all(isinstance(v, int) and not isinstance(v, bool) for v in value)
    if not ok:
        return f"{value!r} must be {_WANT[kind]}"
    if rule.choices is not None:
        bad = [v for v in (value if kind.endswith("_list") else [value]) if v not in rule.choices]
        if bad:
            return f"{bad[0]!r} is not one of {list(rule.choices)}"
    if kind in ("int", "float"):
        if value != value:
            return "NaN is not allowed"
        if value in (float("inf"), float("-inf")):
            return f"{value!r} is not allowed: give a finite number"
        if rule.minimum is not None and value < rule.minimum:
            return f"{value!r} is below the minimum {rule.minimum:g}"
        if rule.maximum is not None and value > rule.maximum:
            return f"{value!r} is above the maximum {rule.maximum:g}"
    return rule.check(value) if rule.check is not None else None


def check_fields(obj: Any) -> None:
    """Check every field of a settings dataclass against its type and `Rule`; lists become tuples.

    Raises
    ------
    SettingError
        Naming the first field with a bad value.
    """
    cls = type(obj)
    for f in dataclasses.fields(obj):
        value = getattr(obj, f.name)
        kind, optional = kind_of(f)
        if value is None and optional:
            continue
        problem = problem_with(kind, rule_of(cls, f), value)
        if problem:
            raise SettingError(f.name, problem)
        if isinstance(value, list):
            object.__setattr__(obj, f.name, tuple(value))


def field_table(cls: type) -> list[tuple[dataclasses.Field, str, Rule]]:
    """``(field, kind, rule)`` of every field of a settings class, in order."""
    return [(f, kind_of(f)[0], rule_of(cls, f)) for f in dataclasses.fields(cls)]


__all__ = ["KINDS", "Rule", "SettingError", "check_fields", "field_table", "kind_of", "problem_with",
           "rule_of", "setting"]
