"""A column's distinct texts and each row's index into them: the one way the readers and the check
find them (a log repeats its file names, sites, lengths, observers, notes and edges over many rows).
"""

from __future__ import annotations

import numpy as np

from firstrung.memory import repeated_object

__all__ = ["distinct_texts", "runs", "shared_texts"]


def distinct_texts(values) -> tuple[np.ndarray, np.ndarray]:
    """``np.unique(values, return_inverse=True)`` for a column of texts, sooner: the distinct values (sorted,
    as NumPy sorts them) and each row's index into them.

    ``str`` objects come back as an object array of one ``str`` per distinct text (the rows' own objects); a
    ``<U`` array as a ``<U`` array; fixed-width bytes (``S``) as bytes, their cells mixed into 64-bit integer
    keys and those sorted, not the texts (a shared key is found and then the texts are sorted); an object
    array of other things as NumPy converts them to text.

    >>> names, inverse = distinct_texts(np.array(["b", "a", "b"], dtype=object))
    >>> names.tolist(), inverse.tolist()
    (['a', 'b'], [1, 0, 1])
    >>> names, inverse = distinct_texts(np.array([b"xy", b"x", b"xy"]))
    >>> names.tolist(), inverse.tolist()
    ([b'x', b'xy'], [1, 0, 1])
    """
    values = np.asarray(values)
    if values.ndim == 1 and values.size > 1 and values.strides[0] == 0:  # one text shared by every row
        names, _ = distinct_texts(values[:1])
        return names, np.zeros(values.size, np.int64)
    if values.dtype.kind == "S":
        return _distinct_bytes(values.reshape(-1))
    if values.dtype.kind != "O":
        names, _, inverse = _unique_by_runs(values.astype(str).reshape(-1))
        return names, inverse
    values = values.reshape(-1)
    listed = values.tolist()
    distinct = set(listed)
    if not listed or not all(type(v) is str for v in distinct):  # NumPy's own conversions
        names, inverse = np.unique(values.astype(str), return_inverse=True)
        return names, inverse.reshape(-1)
    names = np.empty(len(distinct), dtype=object)
    names[:] = sorted(distinct)  # code point order, as NumPy sorts texts
    if names.size == 1:
        return names, np.zeros(len(listed), np.int64)
    code = {name: k for k, name in enumerate(names.tolist())}
    return names, np.array(list(map(code.__getitem__, listed)), np.int64)


def runs(differs: np.ndarray) -> tuple[np.ndarray, np.ndarray] | None:
    """Where the runs of equal rows start and how long each is, given whether each row after the first
    differs from the one before; None for fewer than two rows or runs shorter than four rows on average
    (working row by row then costs no more). A log repeats a site, an observer, a date over runs of rows.

    >>> heads, lengths = runs(np.array([False, False, False, True, False, False, False]))
    >>> heads.tolist(), lengths.tolist()
    ([0, 4], [4, 4])
    """
    n = differs.size + 1
    if n < 2:
        return None
    heads = np.flatnonzero(np.concatenate([[True], differs]))
    if heads.size * 4 > n:
        return None
    return heads, np.diff(np.append(heads, n))


def _unique_by_runs(values: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """``np.unique(values, return_index=True, return_inverse=True)`` of a 1-d array, its inverse flat;
    over runs of equal values only the runs' first values are sorted."""
    found = runs(values[1:] != values[:-1]) if values.size > 1 else None
    if found is None:
        unique, first, inverse = np.unique(values, return_index=True, return_inverse=True)
        return unique, first, inverse.reshape(-1)
    heads, lengths = found
    unique, first, inverse = np.unique(values[heads], return_index=True, return_inverse=True)
    return unique, heads[first], np.repeat(inverse.reshape(-1), lengths)  # a value's first row starts a run


def _distinct_bytes(cells: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """:func:`distinct_texts` of a fixed-width bytes array: each cell's bytes read as 64-bit words and mixed
    into one key; the keys' distinct values are the cells' unless two cells share a key, which is checked."""
    n, width = cells.size, cells.dtype.itemsize
    if n == 0:
        return cells[:0], np.zeros(0, np.int64)
    words = -(-width // 8)
    block = np.zeros((n, words * 8), np.uint8)
    block[:, :width] = cells.view(np.uint8).reshape(n, width)
    block = block.view(np.uint64)
    key = block[:, 0].copy()
    for w in range(1, words):  # a 64-bit mix of the words (a collision is found below, not assumed away)
        key *= np.uint64(0x9E3779B97F4A7C15)
        key ^= block[:, w] + (key >> np.uint64(29))
    _, first, inverse = _unique_by_runs(key)
    values = cells[first]
    if words > 1 and not np.array_equal(values[inverse], cells):
        values, inverse = np.unique(cells, return_inverse=True)
        return values, inverse.reshape(-1)
    order = np.argsort(values, kind="stable")  # the few distinct cells in NumPy's order
    rank = np.empty(order.size, np.int64)
    rank[order] = np.arange(order.size)
    return values[order], rank[inverse]


def shared_texts(values) -> np.ndarray:
    """A column of texts as an object array holding one string object per distinct text (a million rows of
    a few names: a few string objects, not a million). An object array is taken as it is (copied)."""
    values = np.asarray(values)
    if values.dtype == object or values.size == 0:
        return values.astype(object)
    first = values.reshape(-1)[:1]
    if (values == first[0]).all():  # one text in every row (a log's time column): no sort of a million texts
        return repeated_object(first.astype(object)[0], values.size).reshape(values.shape)
    names, inverse = distinct_texts(values.reshape(-1))
    return names.astype(object)[inverse].reshape(values.shape)
