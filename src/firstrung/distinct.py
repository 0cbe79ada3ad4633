"""A column's distinct texts and each row's index into them: the one way the readers and the check
find them (a log repeats its file names, sites, lengths, observers, notes and edges over many rows).
"""

from __future__ import annotations

import numpy as np

from firstrung.memory import repeated_object

__all__ = ["distinct_texts", "shared_texts"]


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
        texts = values.astype(str).reshape(-1)
        if texts.size > 1:  # runs of one text (a log's sites, row after row): only the runs sorted
            heads = np.flatnonzero(np.concatenate([[True], texts[1:] != texts[:-1]]))
            if heads.size * 4 <= texts.size:
                names, inverse = np.unique(texts[heads], return_inverse=True)
                return names, np.repeat(inverse.reshape(-1), np.diff(np.append(heads, texts.size)))
        names, inverse = np.unique(texts, return_inverse=True)
        return names, inverse.reshape(-1)
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
    heads = np.flatnonzero(np.concatenate([[True], key[1:] != key[:-1]]))  # where a run of equal keys starts
    if heads.size * 4 <= n:  # a log repeats a site, an observer, a note over runs of rows: only the runs sorted
        _, first, inverse = np.unique(key[heads], return_index=True, return_inverse=True)
        first = heads[first]  # a key's first row starts a run
        inverse = np.repeat(inverse.reshape(-1), np.diff(np.append(heads, n)))
    else:
        _, first, inverse = np.unique(key, return_index=True, return_inverse=True)
        inverse = inverse.reshape(-1)
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
