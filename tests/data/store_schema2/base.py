"""What every store shares: the records, the interface, the errors, ids, the stored form of
results, the search words and the list cursors. No SQL here (each store has its own)."""

import base64
import binascii
import json
import secrets
import zlib
from dataclasses import dataclass
from datetime import UTC, datetime
from typing import Protocol

#: 1: results with chart series as JSON text. 2: results without chart series or curves
#: (recomputed on view), zlib-compressed; keyset index; search index.
SCHEMA_VERSION = 2
ID_BYTES = 9  # 12 url-safe characters, 72 random bits: unguessable


class StorageError(RuntimeError):
    """The database cannot be used (foreign, corrupted, newer schema, unwritable, full, unreachable).

    ``status`` is the HTTP status a request that meets it gets: 503 while the database
    cannot take the request, 507 when the disk is full.
    """

    def __init__(self, message: str, status: int = 503):
        super().__init__(message)
        self.status = status


@dataclass(frozen=True)
class Scenario:
    id: str
    name: str
    note: str
    created: str  # ISO 8601, UTC, milliseconds: fixed width, so text order is time order
    inputs: dict  # as entered, with units
    results: dict  # as computed at save time (SI); since schema 2 without curves and chart series
    solver_version: str
    parent: str | None
    summary: dict  # key figures for lists


@dataclass(frozen=True)
class Listed:
    """A scenario as a list shows it: only the columns a list reads."""

    id: str
    name: str
    note: str
    created: str
    summary: dict


@dataclass(frozen=True)
class Page:
    """One page of a list, newest first. ``next`` (older) and ``previous`` (newer) are cursors
    for :meth:`ScenarioStore.page`, None at either end."""

    items: list[Listed]
    total: int
    next: str | None
    previous: str | None


class ScenarioStore(Protocol):
    """Saved scenarios. Records are immutable: no update, no delete."""

    #: why saves are refused (None: writable)
    read_only: str | None
    #: what damage was found while running (None: none)
    damaged: str | None

    def create(self, name: str, note: str, inputs: dict, results: dict, solver_version: str,
               parent: str | None, summary: dict) -> Scenario: ...

    def get(self, scenario_id: str) -> Scenario | None: ...

    def page(self, q: str, cursor: str | None, per_page: int) -> Page:
        """A page of the list (or of a search), by keyset: every page costs the same."""

    def search(self, q: str, page: int, per_page: int) -> tuple[list[Listed], int]:
        """Page number ``page`` (1-based) by offset: deep pages cost more; ``page`` is kept for
        the API's ``page`` parameter."""

    def recent(self, n: int) -> list[Listed]: ...

    def mark_damaged(self, what: str): ...

    def close(self) -> None: ...


#: Parts of results that are recomputed from the inputs on view, not stored (schema 2).
SERIES_KEYS = ("curves", "chart_series")


def compact(results: dict) -> dict:
    """Results as stored: without the curves and chart series (deterministic for the inputs
    and the solver version, and 95 % of the bytes)."""
    return {k: v for k, v in results.items() if k not in SERIES_KEYS}


def new_id() -> str:
    return secrets.token_urlsafe(ID_BYTES)


def now_iso() -> str:
    return datetime.now(UTC).isoformat(timespec="milliseconds")


def dumps(obj) -> str:
    return json.dumps(obj, allow_nan=False, separators=(",", ":"), ensure_ascii=False)


def pack(results: dict) -> bytes:
    """Results as stored: compact JSON, zlib-compressed (a few kB)."""
    return zlib.compress(dumps(results).encode(), 6)


def unpack(stored) -> dict:
    """Stored results back; text is read as plain JSON (a record written by hand or by schema 1).
    Raises ValueError when it is neither."""
    if isinstance(stored, bytes | bytearray | memoryview):
        try:
            stored = zlib.decompress(bytes(stored))
        except zlib.error as exc:
            raise ValueError(f"compressed results cannot be read ({exc})") from None
    return json.loads(stored)


def search_text(name: str, note: str, inputs: dict, summary: dict) -> str:
    """What a search looks in, lower-cased: the name, the note and the words of the summary
    and inputs a person would type (what limits the cycle, the feed mode)."""
    feed = inputs.get("feed") if isinstance(inputs, dict) else None
    words = [name, note, str(summary.get("limited_by", "")).replace("_", " "),
             str(feed.get("mode", "")).replace("_", " ") if isinstance(feed, dict) else ""]
    return " ".join(w for w in words if w).lower()


def search_terms(q: str) -> list[str]:
    """What a search looks for, lower-cased: the text as typed, found anywhere in a scenario's
    search text ("case 7" finds "case 7", not "case 17")."""
    return [q.lower()] if q.strip() else []


def like_pattern(term: str) -> str:
    """A LIKE pattern for a substring, with ``\\`` as the escape character."""
    return "%" + term.replace("\\", "\\\\").replace("%", "\\%").replace("_", "\\_") + "%"


@dataclass(frozen=True)
class Cursor:
    """Where a page starts: after (older than) or before (newer than) the row (created, seq).
    ``seq`` is the store's insertion number, which orders scenarios saved in the same millisecond."""

    direction: str  # "older" or "newer"
    created: str
    seq: int

    def encode(self) -> str:
        raw = f"{self.direction[0]}|{self.created}|{self.seq}".encode()
        return base64.urlsafe_b64encode(raw).decode().rstrip("=")

    @classmethod
    def decode(cls, token: str) -> "Cursor":
        """The cursor of a ``next``/``previous`` token; ValueError if it is not one."""
        try:
            raw = base64.urlsafe_b64decode(token + "=" * (-len(token) % 4)).decode()
            d, created, seq = raw.split("|")
            cursor = cls({"o": "older", "n": "newer"}[d], created, int(seq))
        except (binascii.Error, UnicodeDecodeError, ValueError, KeyError):
            raise ValueError("not a cursor from a scenario list: use the next or previous value of a list") from None
        if not 0 <= cursor.seq < 2**63 or len(created) > 40:
            raise ValueError("not a cursor from a scenario list: use the next or previous value of a list")
        return cursor


def page_from_rows(rows: list, cursor: Cursor | None, per_page: int, total: int, to_listed) -> Page:
    """A Page from up to per_page + 1 rows (created, seq, id, name, note, summary-json) fetched in
    the cursor's direction: the extra row says whether there is more that way. ``to_listed``
    makes a Listed of (id, name, note, created, summary-json)."""
    newer = cursor is not None and cursor.direction == "newer"
    more = len(rows) > per_page
    rows = rows[:per_page]
    if newer:
        rows.reverse()
    items = [to_listed((r[2], r[3], r[4], r[0], r[5])) for r in rows]
    if not rows:
        return Page(items, total, None, None)
    first, last = rows[0], rows[-1]
    has_older = more if not newer else True
    has_newer = (cursor is not None) if not newer else more
    return Page(items, total,
                Cursor("older", last[0], last[1]).encode() if has_older else None,
                Cursor("newer", first[0], first[1]).encode() if has_newer else None)


def listed(sid, name, note, created, summary_json) -> Listed:
    """A list row; a summary that is not a JSON object is damage (raised as ValueError)."""
    summary = json.loads(summary_json)
    if not isinstance(summary, dict):
        raise ValueError("summary is not an object")
    return Listed(sid, name, note, created, summary)


def record(row) -> Scenario:
    """A Scenario from (id, name, note, created, inputs-json, results as stored, solver_version,
    parent, summary-json); ValueError/TypeError when any part has the wrong shape."""
    s = Scenario(row[0], row[1], row[2], row[3], json.loads(row[4]), unpack(row[5]), row[6], row[7],
                 json.loads(row[8]))
    if not (all(isinstance(v, str) for v in (s.id, s.name, s.note, s.created, s.solver_version))
            and all(isinstance(v, dict) for v in (s.inputs, s.results, s.summary))):
        raise ValueError("a part of the record has the wrong shape")
    return s


class ListQueries:
    """Lists, pages and searches, the same on every store: keyset pages on (created, seq), where
    ``seq`` is the store's insertion number (``_SEQ``), ``_P`` its parameter mark, ``_match(n)``
    its condition for n search patterns, ``_read(sql, args, one)`` its query."""

    _SEQ: str
    _P: str
    _SHOWN = "id, name, note, created, summary"

    def _match(self, n: int) -> str:
        raise NotImplementedError

    def _read(self, sql: str, args=(), one=False):
        raise NotImplementedError

    def mark_damaged(self, what: str):
        raise NotImplementedError

    def _where(self, q: str) -> tuple[str, tuple]:
        terms = search_terms(q)
        if not terms:
            return "", ()
        return f"WHERE {self._match(len(terms))}", tuple(like_pattern(t) for t in terms)

    def _total(self, where: str, args: tuple) -> int:
        return self._read(f"SELECT count(*) FROM scenarios {where}", args, one=True)[0]

    def _source(self, where: str, total: int) -> tuple[str, str]:
        """The table (with any plan hint) and the condition of a list query that finds ``total`` rows."""
        return "scenarios", where

    def _one_listed(self, row) -> Listed:
        try:
            return listed(*row)
        except (ValueError, TypeError):
            self.mark_damaged(f"the summary of scenario {row[0]!r} in {self} is damaged")

    def page(self, q: str, cursor: str | None, per_page: int) -> Page:
        at = Cursor.decode(cursor) if cursor else None
        where, args = self._where(q)
        total = self._total(where, args)
        source, where = self._source(where, total)
        order, p, seq = "DESC", self._P, self._SEQ
        if at is not None:
            op, order = ("<", "DESC") if at.direction == "older" else (">", "ASC")
            where = f"{where} {'AND' if where else 'WHERE'} (created, {seq}) {op} ({p}, {p})"
            args = (*args, at.created, at.seq)
        rows = self._read(f"SELECT created, {seq}, id, name, note, summary FROM {source} {where} "
                          f"ORDER BY created {order}, {seq} {order} LIMIT {p}", (*args, per_page + 1))
        return page_from_rows(rows, at, per_page, total, self._one_listed)

    def search(self, q: str, page: int, per_page: int) -> tuple[list[Listed], int]:
        where, args = self._where(q)
        total = self._total(where, args)
        source, where = self._source(where, total)
        rows = self._read(f"SELECT {self._SHOWN} FROM {source} {where} ORDER BY created DESC, {self._SEQ} DESC "
                          f"LIMIT {self._P} OFFSET {self._P}", (*args, per_page, (page - 1) * per_page))
        return [self._one_listed(r) for r in rows], total

    def recent(self, n: int) -> list[Listed]:
        rows = self._read(f"SELECT {self._SHOWN} FROM scenarios ORDER BY created DESC, {self._SEQ} DESC "
                          f"LIMIT {self._P}", (n,))
        return [self._one_listed(r) for r in rows]
