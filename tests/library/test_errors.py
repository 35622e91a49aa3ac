"""A malformed rules folder gives a LibraryError naming the file and line."""

import shutil

import pytest

from drc.datafiles import data_folder
from drc.errors import LibraryError
from drc.library.catalogue import load_library


@pytest.fixture
def rules_copy(tmp_path):
    folder = tmp_path / "rules"
    shutil.copytree(data_folder("rules"), folder)
    return folder


def test_copy_loads_as_a_separate_library(rules_copy):
    copy = load_library(rules_copy)
    assert copy is not load_library()
    assert set(copy.families) == set(load_library().families)


def test_toml_syntax_error_has_file_and_line(rules_copy):
    path = rules_copy / "limits.toml"
    path.write_text("[bounce_margin]\nvalue = = 1\n")
    with pytest.raises(LibraryError) as info:
        load_library(rules_copy)
    assert info.value.location.file.endswith("limits.toml")
    assert info.value.location.line == 2


def test_missing_source_is_refused(rules_copy):
    path = rules_copy / "contacts.toml"
    text = path.read_text().replace(
        'bounce_ms = { value = 2.0, source = "common practice, no source (typically under 1 ms)" }',
        "bounce_ms = { value = 2.0 }")
    path.write_text(text)
    with pytest.raises(LibraryError, match="source") as info:
        load_library(rules_copy)
    assert info.value.location.line > 0


def test_disordered_levels_are_refused(rules_copy):
    path = rules_copy / "families.toml"
    text = path.read_text().replace(
        'vil_v = { value = 0.8, source = "from memory, typical of the family (54LS: 0.7 V)" }',
        'vil_v = { value = 2.5, source = "from memory, typical of the family (54LS: 0.7 V)" }')
    path.write_text(text)
    with pytest.raises(LibraryError, match="families.LS"):
        load_library(rules_copy)


def test_missing_file_is_a_library_error(rules_copy):
    (rules_copy / "parts.toml").unlink()
    with pytest.raises(LibraryError, match="parts.toml|cannot read"):
        load_library(rules_copy)


def test_a_copy_with_the_same_content_is_an_equal_library(rules_copy):
    # Memos key on the library's content, never on the object's identity.
    assert load_library(rules_copy) == load_library()
    assert hash(load_library(rules_copy)) == hash(load_library())


def test_a_changed_copy_is_a_different_library(rules_copy):
    path = rules_copy / "limits.toml"
    path.write_text(path.read_text().replace("value = 1.0", "value = 1.5", 1))
    assert load_library(rules_copy) != load_library()


def test_lookup_errors_belong_to_the_error_hierarchy():
    from drc.errors import DrcError
    from drc.library.entries import SupplyOutOfRange, UnknownFamily
    library = load_library()
    with pytest.raises(UnknownFamily) as unknown:
        library.family("HCX")
    assert isinstance(unknown.value, DrcError) and isinstance(unknown.value, KeyError)
    assert unknown.value.render() == str(unknown.value) == \
        "unknown logic family 'HCX'; did you mean HC, HCT, AHC?"
    with pytest.raises(SupplyOutOfRange) as outside:
        library.family("HC").check_supply(7.0)
    assert isinstance(outside.value, DrcError) and isinstance(outside.value, ValueError)
    assert str(outside.value) == "VCC 7 V is outside the HC supply range 2-6 V"


@pytest.mark.parametrize("key", ["tolerance_resistor", "pull_current_budget", "min_closure"])
def test_a_limit_the_code_reads_is_required(rules_copy, key):
    # The design and the fix texts read these limits without a default (REQUIRED_LIMITS).
    import tomllib
    path = rules_copy / "limits.toml"
    tables = tomllib.loads(path.read_text(encoding="utf-8"))
    assert key in tables
    kept = [block for block in path.read_text(encoding="utf-8").split("\n[") if not block.startswith(f"{key}]")]
    path.write_text("\n[".join(kept), encoding="utf-8")
    assert key not in tomllib.loads(path.read_text(encoding="utf-8"))
    with pytest.raises(LibraryError, match=key) as info:
        load_library(rules_copy)
    assert info.value.location.file.endswith("limits.toml")
