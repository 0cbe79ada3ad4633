"""The plain TOML campaign files are made of, read in one pass of regular expressions.

Python's ``tomllib`` reads a campaign of 500 sites in about a tenth of a second and one of 10,000
sites in about two. :func:`loads` reads the plain part of TOML a campaign file uses: comments,
``[table]`` and ``[[array.of.tables]]`` headers of bare keys, ``key = value`` lines whose value is
a string without escapes, a decimal integer or float, a boolean, or an array of those on one line.
It returns what ``tomllib.loads`` returns for such a text, or None for any text with anything
else in it (an escape, a date, an inline table, a quoted or dotted key, a table defined twice,
a tab, a carriage return, ...): the caller then reads it with ``tomllib``, whose messages name
any error. ``tests/test_toml_plain.py`` compares the two on many texts.
"""

from __future__ import annotations

import re
import sys

from firstrung.patterns import pattern

_KEY = r"[A-Za-z0-9_-]+"
#: One value: a string without escapes or control characters, a decimal float, a decimal integer
#: (at most 18 digits), a boolean (groups: basic, literal, float, int, bool).
_SCALAR = (
    r'"(?P<basic>[^"\\\x00-\x1f\x7f]*)"'
    r"|'(?P<literal>[^'\x00-\x1f\x7f]*)'"
    r"|(?P<float>[+-]?(?:0|[1-9][0-9]{0,17})(?:\.[0-9]+(?:[eE][+-]?[0-9]{1,3})?|[eE][+-]?[0-9]{1,3}))"
    r"|(?P<int>[+-]?(?:0|[1-9][0-9]{0,17}))"
    r"|(?P<bool>true|false)"
)
_COMMENT = r"(?: *#[^\x00-\x08\x0a-\x1f\x7f]*| *)"
_SCALAR_RE = pattern(_SCALAR)
_LINE = pattern(
    rf" *(?:(?P<aot>\[\[{_KEY}(?:\.{_KEY})*\]\])|(?P<table>\[{_KEY}(?:\.{_KEY})*\])"
    rf"|(?P<key>{_KEY}) *= *(?P<value>(?:{_SCALAR})|\[[^\]\n]*\]))?{_COMMENT}"
)


def _scalar(match: re.Match):
    kind = match.lastgroup
    text = match.group(kind)
    if kind in ("basic", "literal"):
        return text
    if kind == "float":
        return float(text)
    if kind == "int":
        return int(text)
    return text == "true"


def _array(text: str):
    """The items of a one-line array ``[a, b, ...]`` (a trailing comma allowed), or None."""
    inner, items, pos = text[1:-1], [], 0
    end = len(inner)
    while True:
        while pos < end and inner[pos] == " ":
            pos += 1
        if pos == end:  # empty, or after a trailing comma
            return items
        match = _SCALAR_RE().match(inner, pos)
        if match is None:
            return None
        items.append(_scalar(match))
        pos = match.end()
        while pos < end and inner[pos] == " ":
            pos += 1
        if pos == end:
            return items
        if inner[pos] != ",":
            return None
        pos += 1


def loads(text: str) -> dict | None:
    """``tomllib.loads(text)`` for a plain campaign text, or None for a text with anything else in it."""
    if "\r" in text or "\t" in text:
        return None
    root: dict = {}
    arrays: set[int] = set()  # the lists made by [[...]] headers (others may not be appended to)
    current = root
    line_match, scalar_match = _LINE().fullmatch, _SCALAR_RE().fullmatch
    for line in text.split("\n"):
        match = line_match(line)
        if match is None:
            return None
        aot, table_header, key, value = match.group("aot", "table", "key", "value")
        header = aot or table_header
        if header is not None:
            parts = header.strip("[]").split(".")
            table = root
            for part in parts[:-1]:
                node = table.get(part)
                if isinstance(node, list) and id(node) in arrays:
                    node = node[-1]
                if not isinstance(node, dict):  # missing (made implicitly in TOML) or a value
                    return None
                table = node
            last = parts[-1]
            if aot is not None:
                node = table.get(last)
                if node is None:
                    node = table[last] = []
                    arrays.add(id(node))
                elif not (isinstance(node, list) and id(node) in arrays):
                    return None
                current = {}
                node.append(current)
            else:
                if last in table:  # defined already (or a key's value): tomllib says which
                    return None
                current = table[last] = {}
            continue
        if key is None:
            continue  # a blank line or a comment
        if key in current:
            return None
        if value.startswith("["):
            items = _array(value)
            if items is None:
                return None
            current[key] = items
        else:
            current[key] = _scalar(scalar_match(value))
    return root


def document(text: str) -> dict:
    """``tomllib.loads(text)``: the plain part of TOML read by :func:`loads`, anything else by Python's
    reader (imported only then: a command's start), with its errors and messages as they are."""
    found = loads(text)
    if found:
        return found
    import tomllib

    return tomllib.loads(text)


def syntax_error(error: BaseException) -> bool:
    """Whether ``error`` is the syntax error of Python's TOML reader (never when it was not imported)."""
    reader = sys.modules.get("tomllib")
    return reader is not None and isinstance(error, reader.TOMLDecodeError)


__all__ = ["document", "loads", "syntax_error"]
