"""Annotations: instructions to drc written as comments inside the netlist.

A schematic tool exports comments verbatim, so a designer can keep a
contact's class, a pin's firmware debounce or an accepted finding next to
the part it concerns. The form is a full-line comment starting `*@drc`:

    *@drc contact SW4 class=toggle bounce=20ms form=SPST-NO
    *@drc debounce U9:12 20ms
    *@drc waive pullup-waste SW12 R20 : door sensor needs the wetting current

- `contact PATTERN key=value...`: class, bounce and form for contacts whose
  designator matches the glob PATTERN (like a [[contacts]] config entry;
  an annotation wins over the config file).
- `debounce PART:PIN TIME`: the receiver pin is debounced in firmware for TIME.
- `waive RULE PART... : REASON`: accept findings of RULE that involve every
  listed part (globs); the reason after the colon is required.

Ordinary SPICE tools read these lines as comments. Errors name the file,
line and column.
"""

from __future__ import annotations

import fnmatch
import re
from collections.abc import Iterable
from dataclasses import dataclass, field

from drc.config.settings import ContactConfig
from drc.errors import ConfigError, SourceLocation
from drc.netlist.lines import ANNOTATION_MARK, annotation_lines, normalise_newlines

MARK = ANNOTATION_MARK
_REASON = re.compile(r":(?=\s|$)")


def _split_reason(body: str) -> tuple[str, str, str]:
    parts = _REASON.split(body, maxsplit=1)
    return (parts[0], ":", parts[1]) if len(parts) == 2 else (body, "", "")


@dataclass(frozen=True, slots=True)
class AnnotationWaiver:
    rule: str
    parts: tuple[str, ...]
    reason: str
    location: SourceLocation


@dataclass(slots=True)
class Annotations:
    contacts: list[ContactConfig] = field(default_factory=list)
    debounces: dict[str, float] = field(default_factory=dict)  # "U9:12" (case-folded) -> seconds
    waivers: list[AnnotationWaiver] = field(default_factory=list)
    # Where each `contact` and `debounce` line is (for notes about names that match nothing).
    contact_locations: list[SourceLocation] = field(default_factory=list)
    debounce_locations: dict[str, tuple[str, SourceLocation]] = field(default_factory=dict)

    def __bool__(self) -> bool:
        return bool(self.contacts or self.debounces or self.waivers)


def _error(message: str, file: str, line_no: int, column: int, line: str) -> ConfigError:
    return ConfigError(message, SourceLocation(file, line_no, column), line)


def _time(text: str, where: str, make_error) -> float:
    """A time through the one validator the config and the command line use too."""
    from drc.units import checked_quantity
    try:
        return checked_quantity(text, "time", where)
    except ConfigError as exc:
        raise make_error(exc.message) from None


def _contact(words: list[str], make_error) -> ContactConfig:
    if not words:
        raise make_error("`contact` needs a designator pattern, e.g. `*@drc contact SW4 class=toggle`")
    settings: dict[str, str] = {}
    for word in words[1:]:
        name, sep, value = word.partition("=")
        if not sep or name.lower() not in ("class", "bounce", "form"):
            raise make_error(f"unknown contact setting {word!r}: expected class=, bounce= or form=")
        settings[name.lower()] = value
    bounce = _time(settings["bounce"], "bounce", make_error) if "bounce" in settings else None
    form = settings.get("form")
    if form is not None and form.upper() not in ("SPST-NO", "SPST-NC", "SPDT"):
        raise make_error(f"unknown contact form {form!r}: expected SPST-NO, SPST-NC or SPDT")
    return ContactConfig(pattern=words[0], contact_class=settings.get("class"), bounce_s=bounce,
                         form=form.upper() if form else None)


def parse_annotations(text: str, file: str) -> Annotations:
    """Every `*@drc` line of one file's text."""
    # The reader's own line splitting (CR, LF, CRLF only), so line numbers agree
    # with its locations even when the text holds form feeds or U+2028.
    return read_annotations((file, number, line) for number, line in
                            annotation_lines(normalise_newlines(text)))


def read_annotations(lines: Iterable[tuple[str, int, str]]) -> Annotations:
    """The annotations of `*@drc` lines given as (file, line number, line): what
    the reader collected from every file of a netlist (`Netlist.annotation_lines`),
    so no file is read twice."""
    found = Annotations()
    for file, line_no, line in lines:
        _annotation(found, file, line_no, line)
    return found


def _annotation(found: Annotations, file: str, line_no: int, line: str) -> None:
    """One `*@drc` line into `found`."""
    stripped = line.lstrip()
    column = len(line) - len(stripped) + 1

    def make_error(message: str) -> ConfigError:
        return _error(f"annotation: {message}", file, line_no, column, line)

    body = stripped[len(MARK):]
    # The reason follows a colon that ends a word ("SW1 R2 : why"); a pin
    # reference such as U9:12 has no blank after its colon.
    body, _, reason = _split_reason(body)
    words = body.split()
    if not words:
        raise make_error("empty annotation; expected contact, debounce or waive")
    verb, rest = words[0].lower(), words[1:]
    if verb == "contact":
        found.contacts.append(_contact(rest, make_error))
        found.contact_locations.append(SourceLocation(file, line_no, column))
    elif verb == "debounce":
        if len(rest) != 2 or ":" not in rest[0]:
            raise make_error("expected `*@drc debounce PART:PIN TIME`, e.g. `*@drc debounce U9:12 20ms`")
        found.debounces[rest[0].casefold()] = _time(rest[1], "debounce", make_error)
        found.debounce_locations[rest[0].casefold()] = (rest[0], SourceLocation(file, line_no, column))
    elif verb == "waive":
        if len(rest) < 2:
            raise make_error("expected `*@drc waive RULE PART... : reason`")
        if not reason.strip():
            raise make_error("a waiver needs a reason after a colon: `*@drc waive RULE PART : why`")
        found.waivers.append(AnnotationWaiver(rest[0], tuple(rest[1:]), reason.strip(),
                                              SourceLocation(file, line_no, column)))
    else:
        raise make_error(f"unknown annotation {verb!r}; expected contact, debounce or waive")


def unmatched_names(found: Annotations, contacts: Iterable[str], parts: Iterable[str],
                    receiver_pins: Iterable[str]) -> list[tuple[SourceLocation, str]]:
    """(where, what) for every annotation naming something the board does not have:
    a `contact` pattern no contact matches, a `debounce` pin that is not a logic
    input drc found (or whose part does not exist), a `waive` part pattern no part
    matches. Such a line does nothing, which its author should hear about.

    contacts: contact designators; parts: every element's designator;
    receiver_pins: "PART:PIN" of every receiver. All compared case-insensitively.
    """
    contact_names = [c.casefold() for c in contacts]
    part_names = [p.casefold() for p in parts]
    pins = {p.casefold() for p in receiver_pins}
    notes: list[tuple[SourceLocation, str]] = []
    for entry, where in zip(found.contacts, found.contact_locations, strict=True):
        if not fnmatch.filter(contact_names, entry.pattern.casefold()):
            kind = "names a part that is not a contact" if fnmatch.filter(
                part_names, entry.pattern.casefold()) else "matches no part on the board"
            notes.append((where, f"annotation `contact {entry.pattern}` {kind}; it has no effect"))
    for pin_key, (written, where) in found.debounce_locations.items():
        if pin_key in pins:
            continue
        part = written.rpartition(":")[0]
        why = (f"{part} is not on the board" if part.casefold() not in part_names
               else f"{written} is not a logic input drc found")
        notes.append((where, f"annotation `debounce {written}`: {why}; it has no effect"))
    for waiver in found.waivers:
        for pattern in waiver.parts:
            if not fnmatch.filter(part_names, pattern.casefold()):
                notes.append((waiver.location, f"annotation `waive {waiver.rule}`: {pattern} matches "
                                               "no part on the board"))
    return notes
