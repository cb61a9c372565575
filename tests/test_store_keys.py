"""The keys of short searches (base.search_keys, schema 4) mean exactly what reading the text
meant: a search of one or two characters without whitespace that is not all letters or digits
finds a text if and only if it is a substring of it; one or two letters or digits find a text
if and only if a word begins with them."""

import itertools
import random
import re

from server.store.base import Search, search_keys, search_text, short_pieces, word_prefixes

#: letters and digits (ASCII and not), the LIKE wildcards, punctuation, whitespace of several
#: kinds, a combining mark, and letters whose lower case is longer or other
ALPHABET = "aZ9ßÖİ_%-,;.#\\'\" \t\n\u00a0\u0307KΣ"


def candidates():
    """Every query of one or two characters over the alphabet, as a search sees it."""
    for n in (1, 2):
        for chars in itertools.product(ALPHABET, repeat=n):
            yield "".join(chars)


def test_keys_find_exactly_what_reading_the_text_finds():
    rng = random.Random(13)
    texts = ["100% filter aid under_score", "ß-öl; 7 bar", "line b-2", "a\tb", "İstanbul", "x", ""]
    texts += ["".join(rng.choice(ALPHABET) for _ in range(rng.randint(1, 12))) for _ in range(300)]
    kinds = set()
    for raw in texts:
        text = search_text(raw, "", {}, {})  # lower-cased, as stored
        keys = set(search_keys(text))
        starts = {w[:n] for w in re.findall(r"[^\W_]+", text) for n in (1, 2)}
        for q in candidates():
            search = Search.of(q)
            kinds.add(search.kind)
            if search.kind == "piece":
                assert (search.term in keys) == (search.term in text), (q, text)
            elif search.kind == "prefix":
                assert (search.term in keys) == (search.term in starts), (q, text)
            else:  # whitespace inside (read from the text) or nothing to search for: no key
                assert search.kind in ("scan", "all", "substring") and search.term not in keys, (q, text)
    assert kinds == {"all", "prefix", "piece", "scan", "substring"}  # "İ" lower-cases to two characters


def test_pieces_and_prefixes_never_meet():
    text = search_text("Press A1-b, 100% (trial_7)", "ß-Öl", {"feed": {"mode": "pump_curve"}}, {})
    assert not set(short_pieces(text)) & set(word_prefixes(text))
    assert {"%", "0%", "-", "1-", "-b", "(", "(t", "_", "l_", "_7", ")", "7)", "ß-", "-ö", ","} <= set(short_pieces(text))
    assert not any(c.isspace() for p in short_pieces(text) for c in p)
