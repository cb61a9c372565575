"""The house style of what people read, checked over the sources that write it."""

import re
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]

#: a percentage written without its space: an f-string's "{x:.0%}" (Python writes "99%"), a
#: template's "{{ x }}%" or "5%", a script's "${x}%"
_UNSPACED = {
    "py": re.compile(r"\{[^{}]*:[^{}]*%\}"),
    "html": re.compile(r"(?:\}\}|\d)%(?!\})"),
    "js": re.compile(r"(?:\$\{[^}]*\}|\d)%"),
}


def test_a_percentage_is_written_with_a_space_before_its_sign():
    # the pages mixed "99%" and "99 %"; "99 %" was the style of most (41 in templates and 55 in the
    # server's strings, against 14 format specs writing "99%"), so every one is written so
    found = []
    for folder, ext in (("server", "py"), ("templates", "html"), ("static/js", "js")):
        for path in sorted((ROOT / folder).rglob(f"*.{ext}")):
            for number, line in enumerate(path.read_text(encoding="utf-8").splitlines(), 1):
                if _UNSPACED[ext].search(line):
                    found.append(f"{path.relative_to(ROOT)}:{number}: {line.strip()}")
    assert found == []


def test_the_percent_check_finds_each_unspaced_form():
    # the check above can fail: each pattern finds what it is for and passes the house style
    assert _UNSPACED["py"].search('f"{share:.0%} of it"') and not _UNSPACED["py"].search('f"{100 * share:.0f} %"')
    assert _UNSPACED["html"].search("{{ x | fmt }}%") and _UNSPACED["html"].search("5%")
    assert not _UNSPACED["html"].search("{{ x | fmt }} %") and not _UNSPACED["html"].search("{% if a %}")
    assert _UNSPACED["js"].search("`${share}%`") and not _UNSPACED["js"].search("`${share} %`")
