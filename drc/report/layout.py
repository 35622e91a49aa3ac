"""Lines for people: one model of a text screen, written whole to a pipe or wrapped between phrases on a terminal.

A report for a person is a list of `Line`s, each a few styled spans. Off a
terminal (a pipe, a file, a CI log) each Line is written whole: a log has no
width, and a line cut by a writer that guessed one splits a value from its
unit. On a terminal a Line is wrapped to the console's width, and only
between phrases (after a comma, semicolon or colon, before a parenthesis,
at a column gap); a phrase longer than a row is broken between words, but
never inside a value and its unit ("4.7 kΩ", "1.25 µs"), a threshold and its
value ("VIL 0.8 V"), a designator and its value ("R22 1 kΩ"), or a word such
as a designator or a path: a word longer than the row is left whole for the
terminal to fold. The plain writer is a join of strings (it writes large
reports at the speed of the JSON writer); rich is used only for a terminal.

`ARROW` is the one arrow every screen writes between a contact and a
receiver; `fit_encoding` replaces it and the other non-ASCII signs the
reports use with ASCII spellings where the output's encoding cannot write
them (the table is drc.atomic's, shared with report files).
"""

from __future__ import annotations

import codecs
import re
from collections.abc import Iterable
from typing import NamedTuple

from drc.atomic import PLAIN_ERRORS

ARROW = "→"

def fit_encoding(text: str, encoding: str | None) -> str:
    """`text` as the output encoding can write it: unchanged when it can (UTF-8 and
    the like), else with the ASCII spellings of drc.atomic's "drc-plain" handler
    ("→" -> "->", "Ω" -> "ohm"; one table for screens and files)."""
    if not encoding:
        return text
    try:
        text.encode(encoding)
        return text
    except UnicodeEncodeError:
        pass
    except LookupError:  # an encoding Python does not know: write ASCII
        encoding = "ascii"
    return text.encode(encoding, PLAIN_ERRORS).decode(encoding)


def encoding_is_unicode(encoding: str | None) -> bool:
    """True when `encoding` writes every character (the UTF family)."""
    if not encoding:
        return False
    try:
        return codecs.lookup(encoding).name.startswith("utf")
    except LookupError:
        return False


def path_name(contact: str | None, receiver: str | None) -> str:
    """"SW1 → U1:1", the one way screens name an input path."""
    return f"{contact} {ARROW} {receiver}"


class Line(NamedTuple):
    """One line of a screen: (text, style) spans; `indent` spaces before it, `hang`
    more before each continuation row when a terminal wraps it; `wrap` False for a
    line that must stay as it is (a table row, a source line under its caret)."""

    spans: tuple[tuple[str, str], ...]
    indent: int = 0
    hang: int = 0
    wrap: bool = True

    @property
    def text(self) -> str:
        return "".join(text for text, _style in self.spans)


def plain(text: str, style: str = "", indent: int = 0, hang: int = 0, wrap: bool = True) -> Line:
    """A Line of one span."""
    return Line(((text, style),), indent, hang, wrap)


def plain_text(lines: Iterable[Line]) -> str:
    """The lines as whole lines of plain text (trailing spaces dropped)."""
    return "".join((" " * line.indent + "".join(t for t, _s in line.spans)).rstrip() + "\n"
                   for line in lines)


# ------------------------------------------------------------------ wrapping

# A unit after a number: an optional SI prefix and a unit symbol, or a percent sign.
_UNIT = r"(?:[TGMkmµμunpf]?(?:Ω|F|V|A|s|Hz|W)(?:/V)?|%|dB)(?=$|[\s,;:.)\]/×\-–])"
# Words that name a value and stay with it: thresholds, supplies, currents, bounds.
_NAMES = r"(?:VT[+-]|VI[HL]|VO[HL]|VCC|VDD|II[HL]|Vf|min|max|typ|limit|margin|at|of|to|by|E\d+|[≥≤<>=≈~±])"
_NUMBER_END = re.compile(r"[\d.]$")
_UNIT_START = re.compile(_UNIT)
_NAME_END = re.compile(r"(?:^|[\s(])" + _NAMES + r"$")
_VALUE_START = re.compile(r"[-+]?[\d.]|(?:min|max|typ)\b")
_DESIGNATOR_END = re.compile(r"(?:^|[\s(,])[A-Z][A-Z_]*\d[\w/.:]*$")
_SPACES = re.compile(r" +")


def _break_level(text: str, start: int, end: int) -> int:
    """How good a break the spaces text[start:end] are: 2 between phrases, 1 between
    words, 0 never (a value and its unit, a name and its value)."""
    before, after = text[:start], text[end:]
    if end - start > 1:
        return 2  # a column gap
    if _NUMBER_END.search(before) and _UNIT_START.match(after):
        return 0
    if _VALUE_START.match(after) and (_NAME_END.search(before[-12:]) or _DESIGNATOR_END.search(before[-40:])):
        return 0
    if before[-1:] in ",;:":
        return 2
    return 1


def _words(text: str) -> list[tuple[int, int, int]]:
    """The unbreakable pieces of `text` as (start, end, level of the break before it)."""
    out: list[tuple[int, int, int]] = []
    start, level_before = 0, 2
    for match in _SPACES.finditer(text):
        s, e = match.span()
        if s == 0:
            start = e
            continue
        level = _break_level(text, s, e)
        if level == 0:
            continue
        out.append((start, s, level_before))
        start, level_before = e, level
    if start < len(text):
        out.append((start, len(text), level_before))
    return out


def _phrases(words: list[tuple[int, int, int]]) -> list[list[tuple[int, int]]]:
    phrases: list[list[tuple[int, int]]] = []
    for start, end, level in words:
        if level == 2 or not phrases:
            phrases.append([])
        phrases[-1].append((start, end))
    return phrases


# A phrase that does not fit the open row starts a new one when the row is this full;
# on an emptier row it is split between its words (no row left a stub).
_FULL_ENOUGH = 0.6


def wrap_rows(text: str, first: int, rest: int) -> list[tuple[int, int]]:
    """Row slices (start, end) of `text` wrapped to `first` columns on the first row
    and `rest` on the others, breaking between phrases where a phrase fits a row
    (and the open row is well filled), else between words; never inside a word or
    a value."""
    if len(text) <= first:
        return [(0, len(text))]
    rows: list[tuple[int, int]] = []
    row: list[int] = []  # [start, end] of the open row

    def room() -> int:
        return first if not rows else rest

    def place(start: int, end: int) -> None:
        if row and end - row[0] <= room():
            row[1] = end
            return
        if row:
            rows.append((row[0], row[1]))
        row[:] = [start, end]

    for phrase in _phrases(_words(text)):
        start, end = phrase[0][0], phrase[-1][1]
        if row and end - row[0] <= room():
            row[1] = end
        elif len(phrase) == 1 or (end - start <= rest
                                  and (not row or row[1] - row[0] >= _FULL_ENOUGH * room())):
            place(start, end)
        else:  # longer than a row: fill with its words
            for word_start, word_end in phrase:
                place(word_start, word_end)
    if row:
        rows.append((row[0], row[1]))
    return rows


def print_lines(console, lines: Iterable[Line]) -> None:
    """Print the lines on a rich Console: styled, each wrapped to the console's width
    between phrases (lines with wrap=False as they are)."""
    from rich.text import Text

    width = console.width
    for line in lines:
        text = Text()
        for span_text, style in line.spans:
            text.append(span_text, style=style or None)
        text.rstrip()
        if not line.wrap:
            console.print(Text(" " * line.indent) + text, soft_wrap=True)
            continue
        first = max(width - line.indent, 20)
        rest = max(width - line.indent - line.hang, 20)
        for index, (start, end) in enumerate(wrap_rows(text.plain, first, rest)):
            pad = line.indent + (line.hang if index else 0)
            console.print(Text(" " * pad) + text[start:end], soft_wrap=True)
