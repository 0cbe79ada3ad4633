"""The collection point's store: one SQLite file (write-ahead log, one writer) that survives restarts.

It holds every reading as posted (never deleted: a withdrawn reading is
marked, with the time and the reason), the verdict given when it arrived,
the links' tokens, the schools that joined an open network (each with its
own token) and the key that signs the forms. Writes come from one
thread only (the server's writer); each request's reads open their own
connection, which the write-ahead log lets run beside the writer.
"""

from __future__ import annotations

import datetime as dt
import json
import secrets
import sqlite3
import threading
from dataclasses import dataclass
from pathlib import Path

_SCHEMA = """
CREATE TABLE IF NOT EXISTS reading (
    id INTEGER PRIMARY KEY,
    kind TEXT NOT NULL,
    site TEXT NOT NULL,
    cells TEXT NOT NULL,
    received_utc TEXT NOT NULL,
    form_id TEXT NOT NULL,
    verdict TEXT NOT NULL,
    withdrawn_utc TEXT,
    withdrawn_reason TEXT,
    UNIQUE (site, form_id)
);
CREATE INDEX IF NOT EXISTS reading_kind_site ON reading (kind, site, id);
CREATE INDEX IF NOT EXISTS reading_site ON reading (site, id);
CREATE TABLE IF NOT EXISTS link (
    role TEXT NOT NULL,
    site TEXT NOT NULL,
    token TEXT NOT NULL UNIQUE,
    PRIMARY KEY (role, site)
);
CREATE TABLE IF NOT EXISTS school (
    id TEXT PRIMARY KEY,
    name TEXT NOT NULL,
    cells TEXT NOT NULL,
    token TEXT NOT NULL UNIQUE,
    form_id TEXT NOT NULL UNIQUE,
    joined_utc TEXT NOT NULL
);
CREATE TABLE IF NOT EXISTS setting (
    key TEXT PRIMARY KEY,
    value TEXT NOT NULL
);
"""

#: Bytes of randomness in a link's token (256 bits; ``secrets`` documents 32 bytes as a safe default).
TOKEN_BYTES = 32


@dataclass(frozen=True)
class Reading:
    """One stored reading."""

    id: int
    kind: str
    site: str
    cells: dict[str, str]
    received_utc: str
    form_id: str
    verdict: dict
    withdrawn_utc: str | None
    withdrawn_reason: str | None

    @property
    def withdrawn(self) -> bool:
        return self.withdrawn_utc is not None


def now_utc() -> str:
    return dt.datetime.now(dt.UTC).strftime("%Y-%m-%dT%H:%M:%SZ")


def _connect(path: Path) -> sqlite3.Connection:
    connection = sqlite3.connect(path, isolation_level=None, check_same_thread=False, timeout=30.0)
    connection.execute("PRAGMA busy_timeout = 30000")
    connection.execute("PRAGMA foreign_keys = ON")
    return connection


def _reading(row) -> Reading:
    return Reading(row[0], row[1], row[2], json.loads(row[3]), row[4], row[5], json.loads(row[6]), row[7], row[8])


_COLUMNS = "id, kind, site, cells, received_utc, form_id, verdict, withdrawn_utc, withdrawn_reason"


class Store:
    """The SQLite store of one campaign's collection point.

    >>> import tempfile, pathlib
    >>> s = Store(pathlib.Path(tempfile.mkdtemp()) / "c.sqlite")
    >>> [r.id for r in s.add([("shadows", "a", {"shadow_mm": "1038"}, "f1", {"ok": True})])]
    [1]
    >>> [r.id for r in s.add([("shadows", "a", {"shadow_mm": "1040"}, "f1", {"ok": True})])]  # the same form again
    [1]
    >>> len(s.readings()), s.readings()[0].cells
    (1, {'shadow_mm': '1038'})
    """

    def __init__(self, path) -> None:
        self.path = Path(path)
        self._local = threading.local()
        writer = _connect(self.path)
        mode = writer.execute("PRAGMA journal_mode = WAL").fetchone()[0]
        if str(mode).lower() != "wal":
            raise sqlite3.OperationalError(f"the store {self.path} cannot use a write-ahead log (mode {mode})")
        writer.execute("PRAGMA synchronous = FULL")  # a stored reading survives a power cut
        writer.executescript(_SCHEMA)
        self._writer = writer
        self._write_lock = threading.Lock()

    # --- connections ---------------------------------------------------------------------------

    def _reader(self) -> sqlite3.Connection:
        connection = getattr(self._local, "connection", None)
        if connection is None:
            connection = _connect(self.path)
            self._local.connection = connection
        return connection

    def close(self) -> None:
        self._writer.close()

    # --- settings and links ----------------------------------------------------------------------

    def secret(self) -> bytes:
        """The key that signs the forms (made once, kept in the store)."""
        with self._write_lock:
            row = self._writer.execute("SELECT value FROM setting WHERE key = 'form_key'").fetchone()
            if row is None:
                value = secrets.token_hex(32)
                self._writer.execute("INSERT INTO setting (key, value) VALUES ('form_key', ?)", (value,))
                return bytes.fromhex(value)
            return bytes.fromhex(row[0])

    def links(self, site_ids) -> tuple[str, dict[str, str]]:
        """The coordinator's token and each site's; made on first use, the same after a restart."""
        with self._write_lock:
            known = {(r, s): t for r, s, t in self._writer.execute("SELECT role, site, token FROM link")}
            wanted = [("coordinator", "")] + [("site", s) for s in site_ids]
            self._writer.execute("BEGIN IMMEDIATE")
            try:
                for key in wanted:
                    if key not in known:
                        known[key] = secrets.token_urlsafe(TOKEN_BYTES)
                        self._writer.execute("INSERT INTO link (role, site, token) VALUES (?, ?, ?)", (*key, known[key]))
                self._writer.execute("COMMIT")
            except BaseException:
                self._writer.execute("ROLLBACK")
                raise
        return known[("coordinator", "")], {s: known[("site", s)] for s in site_ids}

    def join_token(self) -> str:
        """The join link's token (made on first use, the same after a restart)."""
        with self._write_lock:
            row = self._writer.execute("SELECT token FROM link WHERE role = 'join' AND site = ''").fetchone()
            if row is not None:
                return row[0]
            token = secrets.token_urlsafe(TOKEN_BYTES)
            self._writer.execute("INSERT INTO link (role, site, token) VALUES ('join', '', ?)", (token,))
            return token

    # --- schools that joined -------------------------------------------------------------------

    def schools(self) -> list[tuple[str, str, tuple, str, str, str]]:
        """Every school that joined, in order: (id, name, cells, token, form_id, joined_utc)."""
        rows = self._reader().execute(
            "SELECT id, name, cells, token, form_id, joined_utc FROM school ORDER BY rowid").fetchall()
        return [(r[0], r[1], tuple(tuple(c) for c in json.loads(r[2])), r[3], r[4], r[5]) for r in rows]

    def add_school(self, school_id: str, name: str, cells, form_id: str) -> tuple[tuple, bool]:
        """Store a school with a new token; a form already stored gives its school again.

        Returns the school's row (as :meth:`schools` gives it) and whether it is new.
        """
        with self._write_lock:
            found = self._writer.execute("SELECT id FROM school WHERE form_id = ?", (form_id,)).fetchone()
            if found is None:
                self._writer.execute(
                    "INSERT INTO school (id, name, cells, token, form_id, joined_utc) VALUES (?, ?, ?, ?, ?, ?)",
                    (school_id, name, json.dumps([list(c) for c in cells], ensure_ascii=False),
                     secrets.token_urlsafe(TOKEN_BYTES), form_id, now_utc()),
                )
            else:
                school_id = found[0]
        row = next(s for s in self.schools() if s[0] == school_id)
        return row, found is None

    # --- readings --------------------------------------------------------------------------------

    def add(self, items) -> list[Reading]:
        """Store readings in one transaction; a form already stored is not stored again.

        ``items``: (kind, site, cells, form_id, verdict) each. Returns the stored
        reading of each item (the earlier one for a form sent twice).
        """
        out_ids = []
        with self._write_lock:
            self._writer.execute("BEGIN IMMEDIATE")
            try:
                for kind, site, cells, form_id, verdict in items:
                    cursor = self._writer.execute(
                        "INSERT INTO reading (kind, site, cells, received_utc, form_id, verdict) VALUES (?, ?, ?, ?, ?, ?) "
                        "ON CONFLICT (site, form_id) DO NOTHING",
                        (kind, site, json.dumps(cells, ensure_ascii=False), now_utc(), form_id,
                         json.dumps(verdict, ensure_ascii=False)),
                    )
                    if cursor.rowcount == 1:
                        out_ids.append(cursor.lastrowid)
                    else:
                        out_ids.append(self._writer.execute(
                            "SELECT id FROM reading WHERE site = ? AND form_id = ?", (site, form_id)).fetchone()[0])
                self._writer.execute("COMMIT")
            except BaseException:
                self._writer.execute("ROLLBACK")
                raise
            found = {r[0]: r for r in self._writer.execute(
                f"SELECT {_COLUMNS} FROM reading WHERE id IN ({','.join('?' * len(out_ids))})", out_ids)}
        return [_reading(found[i]) for i in out_ids]

    def known_forms(self, pairs) -> dict[tuple[str, str], Reading]:
        """The readings already stored from these forms, by (site, form id): one query for a batch."""
        pairs = set(pairs)
        if not pairs:
            return {}
        sites, form_ids = sorted({s for s, _ in pairs}), sorted({f for _, f in pairs})
        rows = self._reader().execute(  # (the unique index on site and form id serves both lists)
            f"SELECT {_COLUMNS} FROM reading WHERE site IN ({','.join('?' * len(sites))}) "
            f"AND form_id IN ({','.join('?' * len(form_ids))})", (*sites, *form_ids)).fetchall()
        return {(r[2], r[5]): _reading(r) for r in rows if (r[2], r[5]) in pairs}

    def withdraw(self, reading_id: int, reason: str) -> Reading | None:
        """Mark a reading withdrawn (it is kept); None when there is no such reading."""
        with self._write_lock:
            self._writer.execute(
                "UPDATE reading SET withdrawn_utc = ?, withdrawn_reason = ? WHERE id = ? AND withdrawn_utc IS NULL",
                (now_utc(), reason, int(reading_id)),
            )
            row = self._writer.execute(f"SELECT {_COLUMNS} FROM reading WHERE id = ?", (int(reading_id),)).fetchone()
        return None if row is None else _reading(row)

    def recent_keys(self, site: str, count: int) -> list[tuple[int, str | None]]:
        """(id, withdrawn_utc) of a site's last ``count`` readings, the newest first (what may change of them)."""
        return self._reader().execute("SELECT id, withdrawn_utc FROM reading WHERE site = ? ORDER BY id DESC LIMIT ?",
                                      (site, int(count))).fetchall()

    def by_ids(self, ids) -> dict[int, Reading]:
        """The readings with these ids."""
        ids = [int(i) for i in ids]
        if not ids:
            return {}
        rows = self._reader().execute(f"SELECT {_COLUMNS} FROM reading WHERE id IN ({','.join('?' * len(ids))})",
                                      ids).fetchall()
        return {r[0]: _reading(r) for r in rows}

    def readings(self, kind: str | None = None, sites=None, include_withdrawn: bool = True) -> list[Reading]:
        """Stored readings in the order they arrived, optionally of one kind and some sites."""
        query = f"SELECT {_COLUMNS} FROM reading WHERE 1 = 1"
        args: list = []
        if kind is not None:
            query += " AND kind = ?"
            args.append(kind)
        if sites is not None:
            sites = list(sites)
            query += f" AND site IN ({','.join('?' * len(sites))})"
            args.extend(sites)
        if not include_withdrawn:
            query += " AND withdrawn_utc IS NULL"
        return [_reading(r) for r in self._reader().execute(query + " ORDER BY id", args).fetchall()]
