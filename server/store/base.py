"""What every store shares: the records, the interface, the errors, ids, the stored form of
results, the search words and the list cursors. No SQL here (each store has its own)."""

import base64
import binascii
import json
import re
import secrets
import zlib
from dataclasses import dataclass
from datetime import UTC, datetime
from typing import Protocol

#: 1: results with chart series as JSON text. 2: results without chart series or curves
#: (recomputed on view), zlib-compressed; keyset index; search index. 3: a count of scenarios
#: kept by triggers in the saving transaction (no count(*) per list); word prefixes for
#: searches of one or two characters; on PostgreSQL the search text in a narrow table of its own.
#: 4: the keys of short searches also hold every piece of one or two characters that is not all
#: letters or digits and has no space ("%", "0%"), so those searches go through the index too
#: (the key table or column renamed, so an instance still on schema 3 refuses saves in words).
SCHEMA_VERSION = 4
#: Searches count their matches up to this many: more is said as "more than COUNT_LIMIT"
#: (counting every one of 20,000 matches would cost more than the page itself).
COUNT_LIMIT = 5000
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
    for :meth:`ScenarioStore.page`, None at either end. ``total`` is exact when ``exact``;
    otherwise more than ``total`` scenarios match (a search with over COUNT_LIMIT matches).
    ``start`` is the 1-based place of the first item in the whole list (None when not known:
    a search counted only up to its limit, or a cursor from before schema 3)."""

    items: list[Listed]
    total: int
    next: str | None
    previous: str | None
    exact: bool = True
    start: int | None = None


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

    def search(self, q: str, page: int, per_page: int) -> Page:
        """Page number ``page`` (1-based) by offset: deep pages cost more; ``page`` is kept for
        the API's ``page`` parameter. No cursors."""

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


#: a word of the search text: letters and digits (Unicode), split at anything else
_WORD = re.compile(r"[^\W_]+")
#: one character that is not a letter or digit (what _WORD splits at)
_NOT_WORD = re.compile(r"[\W_]")
#: searches shorter than this find the words that begin with them (no trigram index serves them)
SUBSTRING_MIN = 3


def word_prefixes(text: str) -> list[str]:
    """The first one and two characters of every word of a search text, each once, sorted:
    what searches of one or two characters look up ("A1" finds "Press A1b", not "XA1")."""
    found = set()
    for word in _WORD.findall(text.lower()):
        found.update((word[:1], word[:2]))
    return sorted(found)


def short_pieces(text: str) -> list[str]:
    """Every piece of one or two characters of a search text (as stored: lower-cased) that has
    no whitespace and is not all letters or digits ("%", "0%", "r_", "-"), each once, sorted:
    what a search of such a piece looks up (found anywhere in the text, as a substring)."""
    found = set()
    for run in text.split():  # the stretches without whitespace (str.isspace)
        for m in _NOT_WORD.finditer(run):  # each piece holds one of these
            i = m.start()
            found.add(run[i])
            if i > 0:
                found.add(run[i - 1:i + 1])
            if i + 1 < len(run):
                found.add(run[i:i + 2])
    return sorted(found)


def search_keys(text: str) -> list[str]:
    """The keys of a search text for searches of one or two characters (schema 4): its word
    prefixes and its short pieces, each once, sorted. The two never meet (a prefix is all
    letters or digits, a piece is not)."""
    return sorted({*word_prefixes(text), *short_pieces(text)})


@dataclass(frozen=True)
class Search:
    """What a list query looks for. ``kind``: "all" (no search), "substring" (three characters
    or more, anywhere in the search text), "prefix" (one or two letters or digits: the start of
    a word), "piece" (one or two characters without whitespace, not all letters or digits, such
    as "%" or "0%": found anywhere, through the keys of short_pieces), "scan" (one or two
    characters with whitespace, such as "7 ": found anywhere, by reading every search text; the
    app strips what is typed, so only a direct call of the store asks this).
    "prefix" and "piece" look their term up among the same keys (search_keys)."""

    kind: str
    term: str = ""

    @classmethod
    def of(cls, q: str) -> "Search":
        terms = search_terms(q)
        if not terms:
            return cls("all")
        term = terms[0]
        if len(term) >= SUBSTRING_MIN:
            return cls("substring", term)
        if _WORD.fullmatch(term):
            return cls("prefix", term)
        if not any(c.isspace() for c in term):
            return cls("piece", term)
        return cls("scan", term)


def like_pattern(term: str) -> str:
    """A LIKE pattern for a substring, with ``\\`` as the escape character."""
    return "%" + term.replace("\\", "\\\\").replace("%", "\\%").replace("_", "\\_") + "%"


@dataclass(frozen=True)
class Cursor:
    """Where a page starts: after (older than) or before (newer than) the row (created, seq).
    ``seq`` is the store's insertion number, which orders scenarios saved in the same millisecond.
    ``older`` counts the rows of the list older than that row when it was known (None: not
    known). Scenarios are never deleted and every save is newer than what is listed, so that
    count stays true while the list grows: a page's place is the current total less it (off
    only by saves that commit with an earlier time, a clock difference between instances)."""

    direction: str  # "older" or "newer"
    created: str
    seq: int
    older: int | None = None

    def encode(self) -> str:
        raw = f"{self.direction[0]}|{self.created}|{self.seq}"
        if self.older is not None:
            raw += f"|{self.older}"
        return base64.urlsafe_b64encode(raw.encode()).decode().rstrip("=")

    @classmethod
    def decode(cls, token: str) -> "Cursor":
        """The cursor of a ``next``/``previous`` token; ValueError if it is not one."""
        try:
            raw = base64.urlsafe_b64decode(token + "=" * (-len(token) % 4)).decode()
            parts = raw.split("|")
            if len(parts) not in (3, 4):
                raise ValueError
            older = int(parts[3]) if len(parts) == 4 else None
            cursor = cls({"o": "older", "n": "newer"}[parts[0]], parts[1], int(parts[2]), older)
        except (binascii.Error, UnicodeDecodeError, ValueError, KeyError):
            raise ValueError("not a cursor from a scenario list: use the next or previous value of a list") from None
        if (not 0 <= cursor.seq < 2**63 or len(cursor.created) > 40
                or (older is not None and not -1 <= older < 2**63)):
            raise ValueError("not a cursor from a scenario list: use the next or previous value of a list")
        return cursor


#: The cursor of the oldest page: newer than a row older than every scenario (no scenario has
#: an empty time); none are older than it.
OLDEST = Cursor("newer", "", 0, -1)


def page_from_rows(rows: list, cursor: Cursor | None, per_page: int, total: int, to_listed,
                   exact: bool = True) -> Page:
    """A Page from up to per_page + 1 rows (created, seq, id, name, note, summary-json) fetched in
    the cursor's direction: the extra row says whether there is more that way. ``to_listed``
    makes a Listed of (id, name, note, created, summary-json). With an exact total, each row's
    count of older rows follows from the cursor's (or, on the first page, from the total) and
    goes into the next cursors, so every page knows its place."""
    newer = cursor is not None and cursor.direction == "newer"
    more = len(rows) > per_page
    rows = rows[:per_page]
    if newer:
        rows.reverse()
    items = [to_listed((r[2], r[3], r[4], r[0], r[5])) for r in rows]
    if not rows:
        return Page(items, total, None, None, exact)
    n = len(rows)
    if not exact:
        older_first = None
    elif cursor is None:
        older_first = total - 1
    elif cursor.older is None:
        older_first = None
    else:
        older_first = cursor.older - 1 if not newer else cursor.older + n
    start = total - older_first if older_first is not None else None
    if start is not None and not 1 <= start <= total - n + 1:
        start = older_first = None  # a cursor from another list (or another search): place unknown
    first, last = rows[0], rows[-1]
    has_older = more if not newer else cursor.created != OLDEST.created
    has_newer = (cursor is not None) if not newer else more
    older_last = older_first - (n - 1) if older_first is not None else None
    return Page(items, total,
                Cursor("older", last[0], last[1], older_last).encode() if has_older else None,
                Cursor("newer", first[0], first[1], older_first).encode() if has_newer else None,
                exact, start)


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
    """Lists, pages and searches on keyset pages (created, seq), where ``seq`` is the store's
    insertion number (``_SEQ``) and ``_P`` its parameter mark. A store gives ``_count(search)``
    (the count of its list, searches counted up to ``count_limit``), ``_filter(search)`` (its
    condition on the scenarios table) and ``_read(sql, args, one)``; it may override ``_source``
    (the plan of a list query) or ``page`` itself."""

    _SEQ: str
    _P: str
    _SHOWN = "id, name, note, created, summary"
    #: searches count their matches up to this many (more: "more than count_limit")
    count_limit = COUNT_LIMIT

    #: searches with more matches than this walk the newest-first index (see _filter); up to
    #: there the matches are looked up and sorted, a cost in proportion to their number (a walk
    #: can read far when the matches cluster among old scenarios, as a trial series does)
    walk_above = COUNT_LIMIT

    def _count(self, search: Search) -> tuple[int, bool]:
        raise NotImplementedError

    def _filter(self, search: Search, walk: bool) -> tuple[str, tuple]:
        """The condition on the scenarios table and its arguments; ``walk``: many matches, so the
        query walks the newest-first index and the condition is checked row by row."""
        raise NotImplementedError

    def _read(self, sql: str, args=(), one=False):
        raise NotImplementedError

    def mark_damaged(self, what: str):
        raise NotImplementedError

    def _capped(self, n: int) -> tuple[int, bool]:
        """A count made with LIMIT count_limit + 1: (the count, exact) or (count_limit, False)."""
        return (n, True) if n <= self.count_limit else (self.count_limit, False)

    def _source(self, walk: bool) -> str:
        """The table of a list query, with any plan hint."""
        return "scenarios"

    def _plan(self, search: Search) -> tuple[int, bool, str, str, tuple]:
        """(total, exact, table, WHERE clause, arguments) of a list query."""
        total, exact = self._count(search)
        walk = search.kind != "all" and (total > self.walk_above or not exact)
        where, args = self._filter(search, walk)
        return total, exact, self._source(walk), f"WHERE {where}" if where else "", args

    def _one_listed(self, row) -> Listed:
        try:
            return listed(*row)
        except (ValueError, TypeError):
            self.mark_damaged(f"the summary of scenario {row[0]!r} in {self} is damaged")

    def page(self, q: str, cursor: str | None, per_page: int) -> Page:
        at = Cursor.decode(cursor) if cursor else None
        total, exact, source, where, args = self._plan(Search.of(q))
        order, p, seq = "DESC", self._P, self._SEQ
        if at is not None:
            op, order = ("<", "DESC") if at.direction == "older" else (">", "ASC")
            where = f"{where} {'AND' if where else 'WHERE'} (created, {seq}) {op} ({p}, {p})"
            args = (*args, at.created, at.seq)
        rows = self._read(f"SELECT created, {seq}, id, name, note, summary FROM {source} {where} "
                          f"ORDER BY created {order}, {seq} {order} LIMIT {p}", (*args, per_page + 1))
        return page_from_rows(rows, at, per_page, total, self._one_listed, exact)

    def search(self, q: str, page: int, per_page: int) -> Page:
        """Page number ``page`` (1-based) by offset: deep pages cost more; kept for the API's
        ``page`` parameter. No cursors."""
        total, exact, source, where, args = self._plan(Search.of(q))
        rows = self._read(f"SELECT {self._SHOWN} FROM {source} {where} ORDER BY created DESC, {self._SEQ} DESC "
                          f"LIMIT {self._P} OFFSET {self._P}", (*args, per_page, (page - 1) * per_page))
        start = (page - 1) * per_page + 1
        return Page([self._one_listed(r) for r in rows], total, None, None, exact,
                    start if rows and exact else None)

    def recent(self, n: int) -> list[Listed]:
        rows = self._read(f"SELECT {self._SHOWN} FROM scenarios ORDER BY created DESC, {self._SEQ} DESC "
                          f"LIMIT {self._P}", (n,))
        return [self._one_listed(r) for r in rows]
