"""The byte reader of plain comma-separated logs gives exactly what the csv module's reading gives."""

from __future__ import annotations

import itertools
import shutil
from pathlib import Path

import numpy as np
import pytest

from firstrung import csv_bytes, csv_table, tabular
from firstrung.campaign import read_campaign
from firstrung.distinct import distinct_texts
from firstrung.methods.shadows.log import LOG_SLOTS, read_shadow_logs
from firstrung.methods.shadows.log_columns import _usual_utc_bytes

ROOT = Path(__file__).resolve().parent
BAD = ROOT / "data" / "bad"
CASES = sorted(p.name for p in BAD.glob("shadows_*.csv"))
KNOWN = {name for slot in LOG_SLOTS for name in slot.names}


def _chunks(path: Path, byte_reader: bool, rows_per_chunk: int | None = None):
    """Header, problems and every chunk's numbers, refused rows, problems and cells as one reader gives them."""
    table = tabular.Table(label="x.csv", chosen={}, rows=[], problems=[], ignored=[], path=path)
    text, _, problem = tabular.decode(path.read_bytes(), "x.csv")
    if problem is not None:
        return None
    text = text.removeprefix("\ufeff")
    table.delimiter = tabular.sniff_delimiter(text, KNOWN)
    if byte_reader:
        chunks = csv_bytes.plain_chunks(table, text, LOG_SLOTS, KNOWN, rows_per_chunk)
        if chunks is None:
            return "not plain"
    else:
        chunks = csv_table.column_chunks(table, text, LOG_SLOTS, KNOWN, 40 if rows_per_chunk else None)
        if chunks is None:
            return None
    numbers, rows, problems, cells, columns = [], [], [], [], []
    for chunk in chunks:
        numbers.extend(chunk.numbers)
        rows.extend(chunk.rows)
        problems.extend(str(p) for p in chunk.problems)
        cells.extend(chunk.cells_of(k) for k in range(len(chunk.numbers)))
        columns.append({name: list(values) for name, values in (chunk.columns or {}).items()})
    merged = {name: list(itertools.chain.from_iterable(c.get(name, ()) for c in columns)) for name in table.chosen}
    return (table.chosen, table.ignored, [str(p) for p in table.problems], numbers, rows, problems, cells,
            {k: v for k, v in merged.items() if v})


def _mixed_log(tmp_path: Path) -> Path:
    """The example shadow log with blank, comment, surplus, short, padded, long and non-ASCII rows among its own."""
    shutil.copytree(ROOT.parent / "examples", tmp_path / "camp")
    log = tmp_path / "camp" / "logs" / "shadows.csv"
    lines = log.read_text().splitlines()
    odd = ["", "# a comment", ",,,", "  ,\t, ", "fjell,2027-03-22T11:00:00Z,1500,x,y,extra", "fjell,2027-03-22T11:00:00Z,1500,x,y,,  ,",
           "fjell,2027-03-22T11:00:00Z", "  fjell , 2027-03-22T11:00:00Z ,\t1500 ,\u00a0Zoë\u3000,y\x1f",
           "fjell,2027-03-22T11:00:00Z,1500,x," + "n" * 200, "fjell,2027-02-30T11:00:00Z,1500,x,y", "\u00a0# not a comment,1,2,3,4",
           "fjell,2027-03-22 11:00,1500.5,Åsa,é", "fjell,2027-03-22T11:00:00Z,15e2,x,y", "\x0b,,,,", "fjell,2027-03-22T24:00:00Z,1,x,y"]
    body = []
    for k, line in enumerate(lines[1:]):
        body.append(line)
        if k % 3 == 1:
            body.append(odd[(k // 3) % len(odd)])
    log.write_text("\r\n".join(["", "# before the header", lines[0]] + body + [""]) + "\r\n")
    return log


@pytest.mark.parametrize("name", CASES)
def test_byte_reader_gives_the_csv_modules_rows_on_the_bad_input_corpus(name):
    csv_read = _chunks(BAD / name, byte_reader=False)
    byte_read = _chunks(BAD / name, byte_reader=True)
    if byte_read == "not plain":
        return  # quotes, a NUL, a lone carriage return or another separator: the csv module reads it
    assert byte_read == csv_read


def test_byte_reader_gives_the_same_rows_in_chunks_of_a_few_rows(tmp_path):
    log = _mixed_log(tmp_path)
    whole = _chunks(log, byte_reader=False)
    assert _chunks(log, byte_reader=True) == whole
    assert _chunks(log, byte_reader=True, rows_per_chunk=3) == _chunks(log, byte_reader=False, rows_per_chunk=3) == whole
    assert len(whole[3]) > 100 and len(whole[5]) >= 1  # rows kept, and a row refused for its surplus cells


def test_shadow_log_read_from_bytes_equals_the_csv_modules_reading(tmp_path, monkeypatch):
    _mixed_log(tmp_path)
    campaign = read_campaign(tmp_path / "camp" / "campaign.toml")
    monkeypatch.setattr(csv_bytes, "ROWS_PER_CHUNK", 5)
    fast = read_shadow_logs(campaign)
    monkeypatch.setattr(csv_bytes, "BYTE_READER", False)
    csv_read = read_shadow_logs(campaign)
    monkeypatch.setattr(tabular, "FAST_PATH", False)
    slow = read_shadow_logs(campaign)
    assert len(fast) > 100
    for other in (csv_read, slow):
        assert len(fast) == len(other)
        for name in ("file", "row", "site", "time_utc", "time_column", "shadow_m", "shadow_column", "gnomon_m",
                     "temperature_c", "pressure_hpa", "observer", "note", "edge", "form"):
            x, y = np.asarray(getattr(fast, name)), np.asarray(getattr(other, name))
            if x.dtype.kind == "f":
                np.testing.assert_array_equal(x, y, err_msg=name)
            else:
                assert x.tolist() == y.tolist(), name
        assert [str(p) for p in fast.problems] == [str(p) for p in other.problems]
        assert fast.rows_read == other.rows_read and fast.notes == other.notes
    assert "Zoë" in set(fast.observer.tolist())  # stripped of the no-break and ideographic spaces, as str.strip does


def test_distinct_bytes_is_numpys_unique():
    rng = np.random.default_rng(3)
    for width in (1, 3, 8, 9, 17, 40):
        alphabet = np.frombuffer(b"ab,c. xyz019", np.uint8)
        lengths = rng.integers(0, width + 1, 5000)
        raw = alphabet[rng.integers(0, alphabet.size, (5000, width))]
        raw[np.arange(width)[None, :] >= lengths[:, None]] = 0
        cells = raw.view(f"S{width}").reshape(-1)
        values, inverse = distinct_texts(cells)
        expected, expected_inverse = np.unique(cells, return_inverse=True)
        assert values.tolist() == expected.tolist() and inverse.tolist() == expected_inverse.tolist()
        # cells in runs, as a log repeats its sites and observers row after row (sorted a run at a time)
        runs = np.repeat(cells[:300], rng.integers(1, 40, 300))
        for column in (runs, runs.astype(str)):
            values, inverse = distinct_texts(column)
            expected, expected_inverse = np.unique(column, return_inverse=True)
            assert values.tolist() == expected.tolist() and inverse.tolist() == expected_inverse.tolist()


def test_usual_utc_times_from_bytes_agree_with_numpys_calendar():
    # numpy's ISO 8601 parser (the proleptic Gregorian calendar) is the reference; every invalid date or
    # time must come back as not usual, never as a wrong instant
    rng = np.random.default_rng(7)
    n = 20000
    year = rng.integers(1550, 2651, n)
    month, day = rng.integers(0, 14, n), rng.integers(0, 33, n)
    hour, minute, second = rng.integers(0, 26, n), rng.integers(0, 61, n), rng.integers(0, 61, n)
    text = [f"{y:04d}-{mo:02d}-{d:02d}T{h:02d}:{mi:02d}:{s:02d}Z"
            for y, mo, d, h, mi, s in zip(year, month, day, hour, minute, second, strict=True)]
    text += ["2024-02-29T12:00:00Z", "2023-02-29T12:00:00Z", "2000-02-29T00:00:00Z", "1900-02-29T00:00:00Z",
             "2027-03-20T11:38:00z", "2027-03-20 11:38:00Z", "2027-03-2OT11:38:00Z"]
    t, usual = _usual_utc_bytes(np.array(text, dtype="S20"))
    for k, cell in enumerate(text):
        try:
            expected = np.datetime64(cell.rstrip("Z"), "ms") if cell.endswith("Z") and "T" in cell else None
        except ValueError:
            expected = None
        if expected is not None and int(cell[11:13]) > 23:
            expected = None  # numpy reads hour 24; the readers leave it to the row checks
        assert (t[k] if usual[k] else None) == expected, cell
    assert usual.sum() > 5000


def _kept_rows(campaign, byte_reader, monkeypatch):
    """The check's copy of every row (header, numbers, cells) and each column as the summary takes it."""
    from firstrung.app.check import RawFile

    monkeypatch.setattr(csv_bytes, "BYTE_READER", byte_reader)
    with tabular.raw_rows_kept() as kept:
        read_shadow_logs(campaign)
    out = {}
    for path, (header, numbers, cells) in kept.items():
        raw = RawFile("shadows", "x.csv", Path(path), header, numbers, cells)
        out[path] = (header, list(numbers), [list(c) for c in cells],
                     {name: raw.column_cells(name) for name in [*header, "no such column"]})
        for name in [*header, "no such column"]:  # the same cells as distinct texts and indices
            texts, code = raw.column_codes(name)
            assert len(set(texts)) == len(texts) and set(code.tolist()) <= set(range(len(texts)))
            assert [texts[c] for c in code.tolist()] == out[path][3][name]
    return out


def test_rows_kept_for_the_check_from_bytes_equal_the_csv_modules(tmp_path, monkeypatch):
    _mixed_log(tmp_path)
    campaign = read_campaign(tmp_path / "camp" / "campaign.toml")
    from_bytes = _kept_rows(campaign, True, monkeypatch)
    assert from_bytes == _kept_rows(campaign, False, monkeypatch)
    (header, numbers, cells, columns), = from_bytes.values()
    assert len(numbers) > 100 and "n" * 200 in columns[header[-1]] and "Zoë" in columns["observer"]
    assert columns["no such column"] == [""] * len(numbers) and ["fjell", "2027-03-22T11:00:00Z"] in cells


def test_lengths_read_as_digits_equal_the_plain_number_check():
    """Cells of whole digits are read from their bytes; every other cell goes through the plain-number
    check; the values and the cells taken agree with that check on every cell."""
    from firstrung.methods.shadows.log_columns import _digit_cells, _plain_cells

    cells = ["1376", "0", "0001", "", "1.5", "15e2", "123456789012345", "12a", "-3", "999999999999999", "7", "٣"]
    as_bytes = np.array([c.encode("utf-8") for c in cells])
    value, whole = _digit_cells(as_bytes)
    expected, plain = _plain_cells(cells, -1.0, 1e16, 1.0)
    assert whole.tolist() == [True, True, True, False, False, False, True, False, False, True, True, False]
    assert value[whole].tolist() == expected[whole].tolist() and plain[whole].all()
    assert _digit_cells(np.array([b"1234567890123456"]))[1].tolist() == [False]  # 16 digits: the long way


def test_usual_utc_times_read_once_a_date_give_what_row_by_row_gives():
    """Rows in runs of one date (a log's day) are read a date at a time; the same cells in a random
    order (no runs) are read row by row; both give the same instants and the same refusals."""
    rng = np.random.default_rng(11)
    dates = [f"{y:04d}-{m:02d}-{d:02d}" for y, m, d in zip(rng.integers(1550, 2651, 400), rng.integers(0, 14, 400),
                                                           rng.integers(0, 33, 400), strict=True)]
    dates += ["2024-02-29", "2023-02-29", "1900-02-29", "2000-02-29", "2027-O3-20", "2027/03/20"]
    text = [f"{date}T{h:02d}:{mi:02d}:{s:02d}Z" for date in dates
            for h, mi, s in zip(rng.integers(0, 26, 8), rng.integers(0, 61, 8), rng.integers(0, 61, 8), strict=True)]
    text += ["2027-03-20T11:38:00z", "2027-03-20 11:38:00Z", "2027-03-20T11-38:00Z"] * 3
    cells = np.array(text, dtype="S20")
    t, usual = _usual_utc_bytes(cells)
    order = rng.permutation(cells.size)
    t_rows, usual_rows = _usual_utc_bytes(cells[order])
    assert usual[order].tolist() == usual_rows.tolist() and 0 < usual.sum() < cells.size
    assert np.array_equal(t[order], t_rows, equal_nan=True)
    assert all(t[k] == np.datetime64(text[k][:-1], "ms") for k in np.flatnonzero(usual).tolist())
