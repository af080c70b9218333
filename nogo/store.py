"""One store for finished results and the pieces of unfinished runs: a single sqlite3 file.

SQLite transactions make every write atomic and safe between concurrent
runs (each write is one transaction; readers never see half an entry); the
file can be backed up or queried by a user with any SQLite client.  Each
entry keeps the fingerprint of what it was derived from and a SHA-256 hash of
its own content; the caller re-verifies the content with exact checks before
calling it exact (:func:`nogo.facets.facets`).

A store that cannot be opened or written never stops a run: the operation
returns a one-line warning instead, and the result is still shown.

Tables: ``entries(key, fingerprint, kind, content_hash, payload, created)``
and ``pieces(run, piece, payload, created)``.
"""

from __future__ import annotations

import hashlib
import json
import os
import sqlite3
import time
from pathlib import Path

SCHEMA = """
CREATE TABLE IF NOT EXISTS entries (
    key TEXT PRIMARY KEY, fingerprint TEXT NOT NULL, kind TEXT NOT NULL,
    content_hash TEXT NOT NULL, payload TEXT NOT NULL, created REAL NOT NULL);
CREATE TABLE IF NOT EXISTS pieces (
    run TEXT NOT NULL, piece TEXT NOT NULL, payload TEXT NOT NULL, created REAL NOT NULL,
    PRIMARY KEY (run, piece));
"""


def default_path() -> Path:
    env = os.environ.get("NOGO_CACHE")
    folder = Path(env) if env else Path.cwd() / ".nogo-cache"
    return folder / "nogo-store.sqlite3"


def content_hash(payload: str) -> str:
    return hashlib.sha256(payload.encode()).hexdigest()


class Store:
    """The sqlite3 store at *path* (a file, or a folder that holds ``nogo-store.sqlite3``)."""

    def __init__(self, path: str | Path | None = None):
        p = Path(path) if path is not None else default_path()
        if p.suffix not in (".sqlite3", ".sqlite", ".db"):
            p = p / "nogo-store.sqlite3"
        self.path = p
        self.warnings: list[str] = []

    def _connect(self) -> sqlite3.Connection:
        self.path.parent.mkdir(parents=True, exist_ok=True)
        con = sqlite3.connect(str(self.path), timeout=30)
        con.executescript(SCHEMA)
        return con

    def _warn(self, what: str, err: Exception) -> None:
        text = f"warning: the store {self.path} could not be {what} ({err}); the result is shown but not kept"
        if text not in self.warnings:
            self.warnings.append(text)

    # -- finished entries ------------------------------------------------------------------------
    def get(self, key: str) -> dict | None:
        """The entry under *key*: {fingerprint, kind, payload (text), hash_ok}; None when absent or unreadable."""
        if not self.path.exists():
            return None
        try:
            con = self._connect()
            try:
                row = con.execute("SELECT fingerprint, kind, content_hash, payload FROM entries WHERE key = ?",
                                  (key,)).fetchone()
            finally:
                con.close()
        except (sqlite3.Error, OSError) as err:
            self.warnings.append(f"warning: the store {self.path} could not be read ({err}); deriving afresh")
            return None
        if row is None:
            return None
        fp, kind, h, payload = row
        return {"fingerprint": fp, "kind": kind, "payload": payload, "hash_ok": content_hash(payload) == h}

    def put(self, key: str, fingerprint: str, kind: str, payload: str) -> bool:
        """Write one entry in one transaction; False (with a warning kept) when the store cannot be written."""
        return self._write("INSERT OR REPLACE INTO entries VALUES (?, ?, ?, ?, ?, ?)",
                           (key, fingerprint, kind, content_hash(payload), payload, time.time()))

    def _write(self, sql: str, params: tuple) -> bool:
        """One statement in one transaction; False (with a warning kept) when the store cannot be written."""
        try:
            con = self._connect()
            try:
                with con:
                    con.execute(sql, params)
            finally:
                con.close()
            return True
        except (sqlite3.Error, OSError) as err:
            self._warn("written", err)
            return False

    # -- pieces of a run ---------------------------------------------------------------------------
    def put_piece(self, run: str, piece: str, data) -> bool:
        return self._write("INSERT OR REPLACE INTO pieces VALUES (?, ?, ?, ?)",
                           (run, piece, json.dumps(data), time.time()))

    def pieces(self, run: str) -> dict[str, object]:
        if not self.path.exists():
            return {}
        try:
            con = self._connect()
            try:
                rows = con.execute("SELECT piece, payload FROM pieces WHERE run = ?", (run,)).fetchall()
            finally:
                con.close()
        except (sqlite3.Error, OSError):
            return {}
        out = {}
        for piece, payload in rows:
            try:
                out[piece] = json.loads(payload)
            except ValueError:
                continue
        return out

    def drop_run(self, run: str) -> None:
        try:
            con = self._connect()
            try:
                with con:
                    con.execute("DELETE FROM pieces WHERE run = ?", (run,))
            finally:
                con.close()
        except (sqlite3.Error, OSError):
            pass


class RunPieces:
    """The closed classes of one symmetric run, written as they are found, for resuming.

    A piece is only a *hint* for where to restart: on resume every class is
    rebuilt from the points, expanded and certified again.
    """

    def __init__(self, store: Store, run: str):
        self.store, self.run = store, run

    def save(self, n_points: int, closed, orbit: int, known) -> None:
        data = self.store.pieces(self.run).get(f"points={n_points}") or {"closed": [], "known": []}
        a, b = closed
        data["closed"].append([list(a), b])
        data["known"] = [[[list(x), y], o] for (x, y), o in known]
        self.store.put_piece(self.run, f"points={n_points}", data)

    def load(self, n_points: int) -> dict | None:
        data = self.store.pieces(self.run).get(f"points={n_points}")
        if not data:
            return None
        return {"closed": [(tuple(a), b) for a, b in data["closed"]],
                "known": [((tuple(a), b), o) for (a, b), o in data["known"]]}

    def clear(self) -> None:
        self.store.drop_run(self.run)
