"""JSON written as it is made (jsonout.write_json, JsonRows): the same characters as one text, in
bounded memory. Python's own ``json.dumps`` with the project's settings is the reference."""

from __future__ import annotations

import io
import json
import random
import tracemalloc
from types import SimpleNamespace

import numpy as np

from firstrung.jsonout import JsonRows, dumps, write_json
from firstrung.methods.shadows.present_network import pairs_json


def _random_value(rng: random.Random, depth: int = 0):
    kind = rng.randrange(8 if depth < 3 else 5)
    if kind == 0:
        return None
    if kind == 1:
        return rng.choice([True, False])
    if kind == 2:
        return rng.randint(-10**12, 10**12)
    if kind == 3:
        return rng.choice([0.1, -0.0, 1e-300, 6371.0088, 2.5e17, rng.uniform(-1e6, 1e6)])
    if kind == 4:
        return "".join(rng.choice(['a', 'é', '"', '\\', '\n', '\x00', '\u2028', 'ß', '日', ' ']) for _ in range(rng.randrange(6)))
    if kind == 5:
        return [_random_value(rng, depth + 1) for _ in range(rng.randrange(4))]
    if kind == 6:
        items = [_random_value(rng, depth + 1) for _ in range(rng.randrange(4))]
        return JsonRows(len(items), lambda items=items: iter(items))
    return {"k" + str(i) + rng.choice(["", "é", '"']): _random_value(rng, depth + 1) for i in range(rng.randrange(4))}


def test_written_json_is_the_text_dumps_gives():
    rng = random.Random(7)
    for _ in range(300):
        obj = {"a": _random_value(rng), "b": [_random_value(rng) for _ in range(3)], "c": {}, "d": []}
        plain = json.loads(json.dumps(obj, default=list))  # the same content with every JsonRows a list
        out = io.StringIO()
        write_json(obj, out)
        assert out.getvalue() == json.dumps(plain, ensure_ascii=False, indent=2, allow_nan=False) + "\n"
        assert out.getvalue() == dumps(obj) + "\n"


def test_an_empty_json_rows_is_an_empty_array():
    assert dumps({"pairs": JsonRows(0, lambda: iter(()))}) == '{\n  "pairs": []\n}'


def _pairs(n: int, seed: int = 3):
    rng = np.random.default_rng(seed)
    ids = np.array([f"school-{k:04d}" for k in range(300)], dtype=object)
    radius = 6371.0 + rng.normal(0, 40, n)
    radius[::97] = np.nan  # a pair without a radius: null
    return SimpleNamespace(
        first=ids[rng.integers(0, 300, n)], second=ids[rng.integers(0, 300, n)],
        date=np.array(["2027-03-20"] * n, dtype=object), north_south_km=rng.uniform(100, 3000, n),
        radius_km=radius, sigma_km=rng.uniform(5, 80, n), low_km=radius - 30, high_km=radius + 30,
        flagged=rng.random(n) < 0.05)


def test_pairs_as_written_are_the_pairs_listed():
    pairs = _pairs(70_000)  # more than one block of rows
    listed = pairs_json(pairs)
    written = pairs_json(pairs, as_written=True)
    assert isinstance(listed, list) and type(listed) is list and len(written) == len(listed) == 70_000
    assert listed[97]["radius_km"]["value"] is None  # the NaN radius
    out = io.StringIO()
    write_json({"pairs": written}, out)
    assert out.getvalue() == dumps({"pairs": listed}) + "\n"


def test_many_pairs_are_written_without_holding_them():
    pairs = _pairs(30_000)
    sink = SimpleNamespace(size=0)
    sink.write = lambda text: setattr(sink, "size", sink.size + len(text))
    tracemalloc.start()
    try:
        write_json({"pairs": pairs_json(pairs, as_written=True)}, sink)
        _, peak = tracemalloc.get_traced_memory()
    finally:
        tracemalloc.stop()
    assert sink.size > 30_000 * 200  # every pair written (some 330 characters each)
    assert peak < 15e6  # the list of the pairs alone is some 42 MB (1.4 kB a pair as dictionaries)
