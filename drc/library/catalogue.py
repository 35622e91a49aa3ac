"""The engineering library: one rules folder loaded, and the questions asked of it.

This module is the only loader of the shipped engineering data (logic
families, generic part types, contact classes, rule limits). It reads the
four rules/*.toml files into the frozen records of `entries` (through
`rules_files`, which refuses malformed data with a located LibraryError) and
answers the pipeline's lookups: a family by name or alias, which part a
subcircuit name is (`part_numbers`), which contact class a switch name is
(`contact_names`), a limit's value. It restates no figure itself: every
number comes from the files, each with its source. A folder is loaded once
per process; lookups are remembered (drc.caching), keyed by the library's
content so that two libraries never answer for each other.
"""

from __future__ import annotations

import difflib
import hashlib
import re
from collections.abc import Mapping
from fnmatch import fnmatchcase
from pathlib import Path

from drc.caching import Memo, memoized
from drc.datafiles import data_folder
from drc.library.contact_names import ContactNames
from drc.library.entries import (
    ContactClass,
    ContactMatch,
    Family,
    Limit,
    OtherPart,
    PartType,
    PinNames,
    ResolvedPart,
    UnknownFamily,
)
from drc.library.part_numbers import PartNumbers

# Lookups by name recur for every instance of a board: (library, name...) -> (answer,).
_PARTS: Memo[tuple[str, str], tuple[ResolvedPart | None]] = Memo("library.resolve_part", 50_000)
_CONTACTS: Memo[tuple[str, str, int | None], tuple[ContactMatch | None]] = Memo(
    "library.contact_class_for", 50_000)
_OTHERS: Memo[tuple[str, str, str], tuple[OtherPart | None]] = Memo("library.other_part_for", 50_000)
_DESIGNATOR_LETTERS = re.compile(r"^([A-Za-z]+)\d")


class Library:
    """The loaded rules folder, with remembered lookups. Build it with load_library().

    Two libraries with the same content are equal (and hash alike): the
    fingerprint, a digest of every record, is what memos key on.
    """

    def __init__(self, families: dict[str, Family], part_types: dict[str, PartType],
                 contact_classes: dict[str, ContactClass], limits: dict[str, Limit],
                 form_words: Mapping[str, frozenset[str]],
                 other_parts: dict[str, OtherPart] | None = None,
                 pin_names: PinNames | None = None, fingerprint: str | None = None) -> None:
        self.families = families
        self.part_types = part_types
        self.contact_classes = contact_classes
        self.limits = limits
        self.other_parts = other_parts or {}
        self.pin_names = pin_names or PinNames(frozenset(), frozenset(), frozenset(), frozenset(),
                                               (), "none given")
        self._family_index: dict[str, str] = {}
        for family in families.values():
            for label in (family.name, *family.aliases):
                self._family_index[label.casefold()] = family.name
        self._part_numbers = PartNumbers(families, part_types, self._family_index)
        self._contact_names = ContactNames(contact_classes.values(), form_words)
        # What the library is made of, as given: kept on disk by `load_library`
        # (drc.diskcache) and passed back to this constructor. Every argument goes here.
        self.records = (families, part_types, contact_classes, limits, dict(form_words),
                        self.other_parts, self.pin_names)
        # `fingerprint`: the digest of these records computed when they were parsed (the
        # disk cache keeps it with them: the repr of every record is most of a load).
        if fingerprint is None:
            content = (families, part_types, contact_classes, limits,
                       sorted((k, sorted(v)) for k, v in form_words.items()), self.other_parts,
                       _sorted_pin_names(self.pin_names))
            fingerprint = hashlib.sha256(repr(content).encode()).hexdigest()
        self.fingerprint = fingerprint

    def __eq__(self, other: object) -> bool:
        return isinstance(other, Library) and other.fingerprint == self.fingerprint

    def __hash__(self) -> int:
        return hash(self.fingerprint)

    # -- families

    def family(self, name: str) -> Family:
        """A family by name or alias, case-insensitive; UnknownFamily with close names."""
        canonical = self._family_index.get(name.strip().casefold())
        if canonical is None:
            labels = self._family_index
            close = difflib.get_close_matches(name.strip().casefold(), list(labels), n=3, cutoff=0.5)
            raise UnknownFamily(name, tuple(dict.fromkeys(labels[c] for c in close)))
        return self.families[canonical]

    def schmitt_data_known(self, family: str) -> bool:
        return self.family(family).schmitt is not None

    # -- parts

    def resolve_part(self, name: str) -> ResolvedPart | None:
        """A generic part type and family from a part number, or None (never a guess).

        74/54 + family letters + function (SN74HC14N, 74AHCT1G04DBVR, 54LS00J),
        or a 4000-series number (CD4093BE, HEF4013BP, 40106B, CD4011UBE ->
        4000UB; Motorola MC14xxx numbers map to 40xx, 401xx or 4xxx). The
        older 4000A grade, families not in families.toml and single-gate
        types in families they are not made in resolve to None.
        """
        memo_key = (self.fingerprint, name)
        found = _PARTS.get(memo_key)
        if found is None:
            found = _PARTS.put(memo_key, (self._part_numbers.resolve(name),))
        return found[0]

    def families_of(self, part_type: PartType) -> tuple[str, ...]:
        """The families a part number of `part_type` resolves in (the library's size is
        the sum over part types)."""
        return self._part_numbers.families_of(part_type)

    # -- contacts

    def contact_class_for(self, name: str, terminals: int | None = None) -> ContactMatch | None:
        """The contact class whose pattern matches `name` (most specific wins), or None.

        The form comes from words in the name (SPDT/CO -> SPDT with three
        terminals, common first; NC -> SPST-NC; NO -> SPST-NO), else from the
        terminal count when given (3 -> SPDT, 2 -> SPST), else the class default.
        """
        memo_key = (self.fingerprint, name, terminals)
        found = _CONTACTS.get(memo_key)
        if found is None:
            found = _CONTACTS.put(memo_key, (self._contact_names.match(name, terminals),))
        return found[0]

    # -- parts that are not logic inputs

    def other_part_for(self, designator: str, model: str | None) -> OtherPart | None:
        """The load or connection a part is, by its model name (first) or its
        designator letters (`LP1` -> LP), or None."""
        memo_key = (self.fingerprint, designator, model or "")
        found = _OTHERS.get(memo_key)
        if found is None:
            found = _OTHERS.put(memo_key, (self._other_part(designator, model),))
        return found[0]

    def _other_part(self, designator: str, model: str | None) -> OtherPart | None:
        if model:
            upper = model.upper()
            for other in self.other_parts.values():
                if any(fnmatchcase(upper, pattern) for pattern in other.models):
                    return other
        letters = _DESIGNATOR_LETTERS.match(designator.rsplit("/", 1)[-1])
        if letters:
            word = letters.group(1).upper()
            for other in self.other_parts.values():
                if word in other.designators:
                    return other
        return None

    def is_known_subcircuit(self, name: str) -> bool:
        """True for a part number, a contact name or a load's or connection's model
        name: the reader keeps such X instances as parts, unexpanded."""
        return (self.resolve_part(name) is not None or self.contact_class_for(name) is not None
                or self.other_part_for("", name) is not None)

    # -- limits

    def limit(self, key: str) -> float:
        """A limit's value in SI units (KeyError naming the key if unknown)."""
        try:
            return self.limits[key].value
        except KeyError:
            raise KeyError(f"unknown limit '{key}'") from None


def _sorted_pin_names(names: PinNames) -> tuple:
    """The port-name table with its sets sorted: a set's order varies between processes."""
    return (sorted(names.supply), sorted(names.ground), sorted(names.inputs), sorted(names.outputs),
            sorted(sorted(group) for group in names.synonyms), names.source)


# ------------------------------------------------------------------ loading

# Limits read without a default outside the rules (the design, the fix texts): a rules
# folder must define each. The rules name theirs in their RuleDoc (checks.context.limit).
REQUIRED_LIMITS = ("bounce_margin", "min_closure", "leakage_headroom_margin", "pull_current_budget",
                   "tolerance_resistor", "tolerance_capacitor", "tolerance_rail", "contact_closed_resistance")


def _load_folder(folder: Path) -> Library:
    from drc.library.rules_files import (
        RulesFile,
        parse_contact,
        parse_family,
        parse_form_words,
        parse_limit,
        parse_other_parts,
        parse_part,
        parse_pin_names,
    )
    fam_r = RulesFile(folder / "families.toml")
    families = {name: parse_family(fam_r, name, raw)
                for name, raw in fam_r.table(fam_r.data.get("families"), "families").items()}

    parts_r = RulesFile(folder / "parts.toml")
    part_types = {name: parse_part(parts_r, name, raw)
                  for name, raw in parts_r.table(parts_r.data.get("parts"), "parts").items()}
    for part in part_types.values():
        for fam in (*(part.families or ()), *((part.family,) if part.family else ())):
            if fam not in families:
                raise parts_r.error(f'parts."{part.name}".families', f"unknown family {fam}")
    other_parts = parse_other_parts(parts_r)
    pin_names = parse_pin_names(parts_r)

    con_r = RulesFile(folder / "contacts.toml")
    classes = {name: parse_contact(con_r, name, raw)
               for name, raw in con_r.table(con_r.data.get("classes"), "classes").items()}
    form_words = parse_form_words(con_r)
    seen: dict[str, str] = {}
    for cls in classes.values():
        for pattern in cls.patterns:
            if pattern in seen:
                raise con_r.error(f"classes.{cls.name}.patterns",
                                  f"pattern {pattern} also in class {seen[pattern]}")
            seen[pattern] = cls.name

    lim_r = RulesFile(folder / "limits.toml")
    limits = {key: parse_limit(lim_r, key, raw) for key, raw in lim_r.data.items()}
    for key in REQUIRED_LIMITS:
        if key not in limits:
            raise lim_r.error(key, "missing: the analysis and the design read this limit")
    return Library(families, part_types, classes, limits, form_words, other_parts, pin_names)


@memoized(limit=64)
def _load_cached(folder: Path) -> Library:
    """The folder's library: from the disk cache when its files are unchanged (keyed by
    their bytes and the tool), else parsed and kept there."""
    from drc import diskcache
    key = diskcache.make_key("library", (str(folder), diskcache.folder_digest(folder)))
    kept = diskcache.load("library", key)
    if type(kept) is tuple and len(kept) == 2 and type(kept[0]) is tuple and len(kept[0]) == 7 \
            and type(kept[1]) is str:
        try:
            return Library(*kept[0], fingerprint=kept[1])
        except (TypeError, ValueError, AttributeError):
            pass  # an entry of another shape: parse the files
    library = _load_folder(folder)
    diskcache.store("library", key, (library.records, library.fingerprint))
    return library


def load_library(rules_dir: Path | None = None) -> Library:
    """The library of a rules folder (default: the shipped rules/), loaded once per folder."""
    folder = Path(rules_dir) if rules_dir is not None else data_folder("rules")
    return _load_cached(folder.resolve())
