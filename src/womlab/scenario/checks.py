"""Validation helpers shared by the scenario's sections: one wording for every error.

Every message names the dotted field, the value given and what is allowed, e.g.
``adoption.satisfied_share must be in [0, 1], got 1.4``.
"""

from __future__ import annotations

import dataclasses
import difflib
import functools
import math
import re
import types
import typing
from typing import Any

from womlab.errors import ScenarioError

__all__ = [
    "fail",
    "in_unit",
    "non_negative",
    "positive_int",
    "one_of",
    "unknown_field",
    "coerce",
    "field_names",
    "hints",
    "drop_none",
    "utf8_text",
    "found_columns",
]


def fail(dotted: str, value: Any, allowed: str) -> typing.NoReturn:
    raise ScenarioError(f"{dotted} must be {allowed}, got {value!r}")


def in_unit(dotted: str, value: float) -> None:
    if not (0.0 <= value <= 1.0):
        fail(dotted, value, "in [0, 1]")


def non_negative(dotted: str, value: float) -> None:
    if not (math.isfinite(value) and value >= 0):
        fail(dotted, value, "a finite number >= 0")


def positive_int(dotted: str, value: int) -> None:
    if value < 1:
        fail(dotted, value, "a whole number >= 1")


def one_of(dotted: str, value: str, known: tuple[str, ...]) -> None:
    if value not in known:
        close = difflib.get_close_matches(value, known, n=1)
        hint = f" (did you mean {close[0]!r}?)" if close else ""
        raise ScenarioError(f"{dotted} must be one of {', '.join(known)}; got {value!r}{hint}")


def field_names(cls: type) -> list[str]:
    return [f.name for f in dataclasses.fields(cls)]


@functools.cache  # typing.get_type_hints is most of the cost of Scenario.replace; a class's hints never change
def hints(cls: type) -> dict[str, Any]:
    return typing.get_type_hints(cls)


def unknown_field(dotted: str, known: list[str]) -> typing.NoReturn:
    leaf = dotted.rsplit(".", 1)[-1]
    prefix = dotted[: -len(leaf)]
    close = difflib.get_close_matches(leaf, known, n=1)
    hint = f"; did you mean {prefix}{close[0]!r}?" if close else ""
    raise ScenarioError(f"unknown field {dotted!r}{hint} (known here: {', '.join(known)})")


def coerce(value: Any, hint: Any, dotted: str) -> Any:
    """Check ``value`` against a field's type hint; ints are accepted for floats."""
    union = typing.get_origin(hint) in (typing.Union, types.UnionType)
    args = typing.get_args(hint) if union else ()  # a list hint's own args are its items, not alternatives
    optional = type(None) in args
    base = next((a for a in args if a is not type(None)), hint) if args else hint
    if value is None:
        if optional:
            return None
        raise ScenarioError(f"{dotted} must not be empty")
    if base is float:
        if isinstance(value, bool) or not isinstance(value, (int, float)):
            raise ScenarioError(f"{dotted} must be a number, got {value!r}")
        return float(value)
    if base is int:
        if isinstance(value, float) and value.is_integer():
            value = int(value)
        if isinstance(value, bool) or not isinstance(value, int):
            raise ScenarioError(f"{dotted} must be a whole number, got {value!r}")
        return value
    if base is str:
        if not isinstance(value, str):
            raise ScenarioError(f"{dotted} must be text, got {value!r}")
        return value
    if base is bool:
        if not isinstance(value, bool):
            raise ScenarioError(f"{dotted} must be true or false, got {value!r}")
        return value
    if typing.get_origin(base) in (list, tuple):
        if not isinstance(value, (list, tuple)):
            raise ScenarioError(f"{dotted} must be a list, got {value!r}")
        (item_hint,) = typing.get_args(base)[:1] or (Any,)
        return tuple(
            value if item_hint is Any else (coerce(v, item_hint, f"{dotted}[{i}]") for i, v in enumerate(value))
        )
    return value


def drop_none(value: Any) -> Any:
    if isinstance(value, dict):
        return {k: drop_none(v) for k, v in value.items() if v is not None}
    if isinstance(value, (list, tuple)):
        return [drop_none(v) for v in value]
    return value


def utf8_text(raw: bytes, kind: str) -> str:
    """``raw`` decoded as UTF-8 (a UTF-8 byte-order mark is allowed), or a ValueError saying in one
    line why it is not UTF-8 text: UTF-16, binary, or an invalid byte (named by position, never by
    the file's contents). ``kind`` names what the file should be (``TOML``, ``CSV``).

    Examples
    --------
    >>> utf8_text(b"\\xef\\xbb\\xbfname = 1", "TOML")
    'name = 1'
    >>> utf8_text(b"a\\nb\\xff", "CSV")
    Traceback (most recent call last):
    ...
    ValueError: is not UTF-8 text (byte 0xff at line 2, column 2); save it as UTF-8 CSV
    """
    if raw[:2] in (b"\xff\xfe", b"\xfe\xff"):
        raise ValueError(f"is UTF-16 text; save it as UTF-8 {kind}")
    if b"\x00" in raw:
        raise ValueError(f"is not a text file (it holds binary data); expected UTF-8 {kind}")
    try:
        return raw.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        line = raw[: exc.start].count(b"\n") + 1
        column = exc.start - (raw.rfind(b"\n", 0, exc.start) + 1) + 1
        raise ValueError(
            f"is not UTF-8 text (byte 0x{raw[exc.start]:02x} at line {line}, column {column}); save it as UTF-8 {kind}"
        ) from None


_COLUMN_NAME = re.compile(r"[A-Za-z_][A-Za-z0-9_ .-]{0,39}")


def found_columns(columns: list[str]) -> str:
    """What an error about missing columns may say of the columns found: their names when they read
    as the header row of a CSV (at least two names, each a short plain word), else only that the
    first line is not shown — so that a path pointed at some other file (a secrets file, the
    system's password file) never has its first line echoed.

    Examples
    --------
    >>> found_columns(["from", "to"])
    ' (found from, to)'
    >>> found_columns(["API_KEY=sk-live-123"])
    ' (its first line is not shown: it does not read as a header of column names)'
    """
    if len(columns) >= 2 and all(_COLUMN_NAME.fullmatch(str(c)) for c in columns):
        return f" (found {', '.join(map(str, columns))})"
    return " (its first line is not shown: it does not read as a header of column names)"
