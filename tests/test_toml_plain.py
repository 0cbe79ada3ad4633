"""The quick reader of plain campaign TOML (firstrung.toml_plain) gives what Python's tomllib gives
(the outside reference: the standard library's TOML 1.0 reader), or leaves the text to tomllib."""

from __future__ import annotations

import random
import tomllib
from pathlib import Path

import pytest

from firstrung import toml_plain

ROOT = Path(__file__).resolve().parent.parent

VALUES = [
    "1", "-3", "+5", "0", "-0", "007", "1_000", "123456789012345678", "1234567890123456789012",
    "1.5", "-0.0", "+2.25", "1e5", "1.5e-3", "6.02E23", "1e06", "1.", ".5", "1e", "inf", "nan", "0x1F",
    "true", "false", "True", '"text"', '"with # hash"', '"a\\"b"', '"caf\u00e9"', "'literal'", "''", '""',
    '"tab\there"', "'multi", '"""x"""', "[1, 2]", "[1, 2,]", "[ ]", "[]", '["a", "b"]', "[1,,2]",
    "[1 2]", "[[1], 2]", "['x', 1.5, true]", "2027-03-20", "{a = 1}", "", "1 2",
]
KEYS = ["name", "id", "latitude_deg", "height_m", "shadows", "edge", "x-1", "a.b", '"quoted"', "k k"]
HEADERS = ["[campaign]", "[[site]]", "[site.gnomon]", "[logs]", "[[baseline]]", "[a.b]", "[site]",
           "[[site.instrument]]", "[ campaign ]", "[[logs]]", "[site.gnomon.more]", "[campaign] # c"]


def _document(rng: random.Random) -> str:
    lines = []
    for _ in range(rng.randint(0, 14)):
        r = rng.random()
        if r < 0.25:
            lines.append(rng.choice(HEADERS))
        elif r < 0.85:
            line = f"{rng.choice(KEYS)}{rng.choice([' = ', '=', '  =  '])}{rng.choice(VALUES)}"
            lines.append(line + rng.choice(["", "", "  # note", "#x", "  "]))
        elif r < 0.95:
            lines.append(rng.choice(["", "# comment", "   ", "  # indented comment"]))
        else:
            lines.append(rng.choice(["\t", "key = 1\r", "junk", "  x = 2"]))
    return "\n".join(lines) + rng.choice(["", "\n"])


def _same(a, b) -> bool:
    """Equal values of the same types (a float's sign and NaN included)."""
    if type(a) is not type(b):
        return False
    if isinstance(a, dict):
        return list(a) == list(b) and all(_same(a[k], b[k]) for k in a)
    if isinstance(a, list):
        return len(a) == len(b) and all(_same(x, y) for x, y in zip(a, b, strict=True))
    if isinstance(a, float):
        return repr(a) == repr(b)
    return a == b


def test_random_texts_read_as_tomllib_reads_them():
    rng = random.Random(18)
    read = 0
    for _ in range(6000):
        text = _document(rng)
        ours = toml_plain.loads(text)
        if ours is None:
            continue
        read += 1
        reference = tomllib.loads(text)  # never an error where the quick reader read a text
        assert _same(ours, reference), text
    assert read > 500  # many texts were read here, not all left to tomllib


@pytest.mark.parametrize("path", sorted(p for p in ROOT.glob("**/*.toml") if ".venv" not in p.parts
                                         and "pyproject" not in p.name), ids=lambda p: p.name)
def test_the_projects_campaign_files(path):
    try:
        text = path.read_text(encoding="utf-8").removeprefix("\ufeff")
    except UnicodeDecodeError:
        pytest.skip("not UTF-8 (the campaign reader refuses it before any TOML)")
    ours = toml_plain.loads(text)
    if ours is not None:
        assert _same(ours, tomllib.loads(text))


def test_a_plain_campaign_is_read_here():
    text = (ROOT / "examples" / "campaign.toml").read_text(encoding="utf-8")
    assert toml_plain.loads(text) is not None  # else nothing is gained
    assert toml_plain.loads(text.replace("\n", "\r\n", 1)) is None  # a carriage return: tomllib reads it


@pytest.mark.parametrize("text", [
    "a = 1\na = 2",  # a key twice
    "[t]\n[t]",  # a table twice
    "[[s]]\n[s]",  # an array of tables named as a table
    "[t.u]",  # a table inside one never defined (tomllib defines it implicitly)
    "x = 1\n[x.y]",  # a table inside a value
    "[[s]]\ng = 1\n[s.g]",  # a table over a key
    "a = [1, 2",  # an open array
    "s = \"open",
])
def test_what_tomllib_refuses_or_defines_otherwise_is_left_to_it(text):
    assert toml_plain.loads(text) is None
