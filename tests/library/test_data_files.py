"""Every shipped rules file loads, and every value in it carries a source."""

import tomllib

import pytest

from drc.datafiles import data_folder

FILES = ("families.toml", "parts.toml", "contacts.toml", "limits.toml")
# The source marks the brief allows: a recalled standard, a recalled
# typical figure, or a fact of the trade.
MARKS = ("from memory", "common practice, no source")


def _load(name):
    with open(data_folder("rules") / name, "rb") as handle:
        return tomllib.load(handle)


def _is_value(leaf) -> bool:
    return isinstance(leaf, (bool, int, float)) or (
        isinstance(leaf, list) and any(_is_value(x) for x in leaf))


def _unsourced(node, path, source_in_scope):
    """Paths of numeric/boolean leaves with no `source` in their table or above it."""
    if isinstance(node, dict):
        here = source_in_scope or isinstance(node.get("source"), str)
        for key, value in node.items():
            yield from _unsourced(value, f"{path}.{key}", here)
    elif isinstance(node, list) and any(isinstance(x, dict) for x in node):
        for i, item in enumerate(node):
            yield from _unsourced(item, f"{path}[{i}]", source_in_scope)
    elif _is_value(node) and not source_in_scope:
        yield path


def _sources(node):
    if isinstance(node, dict):
        for key, value in node.items():
            if key == "source":
                yield value
            else:
                yield from _sources(value)
    elif isinstance(node, list):
        for item in node:
            yield from _sources(item)


@pytest.mark.parametrize("name", FILES)
def test_file_loads_and_every_value_has_a_source(name):
    data = _load(name)
    assert data, f"{name} is empty"
    missing = list(_unsourced(data, name, False))
    assert not missing, f"values without a source: {missing}"


@pytest.mark.parametrize("name", FILES)
def test_every_source_says_how_it_is_known(name):
    bad = [s for s in _sources(_load(name)) if not any(m in s for m in MARKS)]
    assert not bad, f"sources without 'from memory' or 'common practice, no source': {bad}"


def test_each_family_quantity_has_its_own_source():
    for name, family in _load("families.toml")["families"].items():
        for key, value in family.items():
            if isinstance(value, dict):
                assert isinstance(value.get("source"), str) and value["source"].strip(), \
                    f"families.{name}.{key} has no source of its own"


def test_families_of_the_brief_are_present(library):
    wanted = {"LS", "ALS", "F", "HC", "HCT", "AC", "ACT", "AHC", "AHCT", "4000B", "4000UB",
              "LVC", "LVX", "ALVC", "LVCMOS33", "LVCMOS25", "LVCMOS18", "MCU-3V3", "MCU-5V"}
    assert wanted <= set(library.families)


def test_library_loads_once_per_folder(library):
    from drc.library.catalogue import load_library
    assert load_library() is library
    assert load_library(data_folder("rules")) is library
