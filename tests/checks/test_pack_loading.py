"""Rule packs loaded in-process: what a broken pack's error says and where it points.

tests/checks/test_rule_packs.py installs real packs with pip (slow); here the
"drc.rules" entry points are made by hand (importlib.metadata.EntryPoint over
modules written to a temporary folder), so each failure a pack can have is
checked quickly. The expected locations are the lines of the pack files the
test writes itself; Python's own SyntaxError and traceback say the same.
"""

from __future__ import annotations

import importlib.metadata
import os
import sys
from types import SimpleNamespace

import pytest

from drc.checks import registry
from drc.errors import RulePackError

GOOD = '''from drc.checks.registry import rule
from drc.checks.ruledoc import RuleDoc

DOC = RuleDoc(id="inproc-demo", title="t", severity="note", what="w", why="y", how="h", fix="f",
              failing_example="", passing_example="")


@rule(DOC)
def check(result, ctx):
    return ()
'''


@pytest.fixture
def packs(tmp_path, monkeypatch):
    """Write modules and expose them as entry points of the group; restore the registry after."""
    monkeypatch.syspath_prepend(str(tmp_path))
    points: list = []
    monkeypatch.setattr(importlib.metadata, "entry_points",
                        lambda group=None: [p for p in points if p.group == group])
    monkeypatch.setattr(registry, "may_declare_packs", lambda: True)  # the packs here are not installed
    before = {r.id for r in registry.registered_rules()}
    monkeypatch.setattr(registry, "_packs_loaded", False)

    def add(module: str, text: str, name: str | None = None, dist: str | None = None):
        (tmp_path / f"{module}.py").write_text(text, encoding="utf-8")
        point = importlib.metadata.EntryPoint(name or module, module, registry.ENTRY_POINT_GROUP)
        if dist is not None:  # an installed pack's entry point knows its distribution
            point = SimpleNamespace(name=point.name, value=point.value, group=point.group,
                                    load=point.load, dist=SimpleNamespace(name=dist))
        points.append(point)
        return tmp_path / f"{module}.py"

    yield add
    for p in points:
        sys.modules.pop(p.value, None)
    points.clear()
    registry._packs_loaded = True
    registry.unregister({r.id for r in registry.registered_rules()} - before)


def test_a_good_pack_registers_its_rule_after_the_built_ins(packs):
    packs("inproc_good", GOOD)
    generation = registry._GENERATION  # read without loading the packs
    ids = [r.id for r in registry.registered_rules()]
    assert ids[-1] == "inproc-demo" and "bounce-window" in ids
    assert registry.registry_generation() == generation + 1
    registry.unregister(["inproc-demo"])
    assert "inproc-demo" not in [r.id for r in registry.registered_rules()]
    assert registry.registry_generation() == generation + 2
    registry.unregister(["inproc-demo"])  # gone already: no change
    assert registry.registry_generation() == generation + 2


def test_a_syntax_error_points_at_the_pack_line_and_column(packs):
    path = packs("inproc_syntax", "x = 1\ny = (2 +\n")
    with pytest.raises(RulePackError) as err:
        registry.registered_rules()
    e = err.value
    assert "'inproc_syntax'" in e.message and "'drc.rules'" in e.message and "SyntaxError" in e.message
    assert "'inproc_syntax' (entry point" in e.message  # no distribution known: none named
    assert e.location.file == str(path) and e.location.line == 2 and e.location.column >= 1
    try:
        compile(path.read_text(), str(path), "exec")
    except SyntaxError as python:
        assert e.message.endswith(python.msg) and e.location.line == python.lineno
        assert e.source_line == python.text and "y = (2 +" in e.source_line  # the line, shown under the place


def test_an_error_in_the_pack_points_at_its_own_line(packs):
    path = packs("inproc_slip", '"""A pack with a slip."""\nimport os\n\nvalue = os.no_such_thing\n', dist="slip-pack")
    with pytest.raises(RulePackError) as err:
        registry.registered_rules()
    e = err.value
    assert e.location.file == str(path) and e.location.line == 4
    assert "value = os.no_such_thing" in (e.source_line or "")
    assert "of slip-pack" in e.message and "AttributeError" in e.message
    assert "entry point 'inproc_slip'" in e.message


def test_a_refused_rule_points_at_the_decorator_line_in_the_pack(packs):
    if "MUTANT_UNDER_TEST" in os.environ:  # mutmut's trampoline sits between the pack and drc
        pytest.skip("under mutation testing the innermost frame is mutmut's own")
    path = packs("inproc_refused", GOOD.replace('severity="note"', 'severity="fatal"'))
    with pytest.raises(RulePackError) as err:
        registry.registered_rules()
    assert err.value.location.file == str(path) and err.value.location.line == 8
    assert "severity must be one of" in err.value.message


def test_a_missing_module_has_no_pack_line(packs):
    packs("inproc_missing", "import inproc_nowhere_to_be_found\n")
    with pytest.raises(RulePackError) as err:
        registry.registered_rules()
    assert "ModuleNotFoundError" in err.value.message and "inproc_nowhere_to_be_found" in err.value.message
    assert err.value.location.line == 1


def test_a_failed_load_is_tried_again(packs):
    path = packs("inproc_again", "raise ValueError('not yet')\n")
    for _ in range(2):  # the error does not go away silently on the next read
        with pytest.raises(RulePackError):
            registry.registered_rules()
    path.write_text(GOOD, encoding="utf-8")
    sys.modules.pop("inproc_again", None)
    assert "inproc-demo" in [r.id for r in registry.registered_rules()]


# The quick scan (registry.may_declare_packs) must never say "no packs" where
# importlib.metadata, the outside reference, finds one.

def _dist(folder, name: str, entry_points: str | None) -> None:
    info = folder / f"{name}-0.1.dist-info"
    info.mkdir(parents=True)
    (info / "METADATA").write_text(f"Metadata-Version: 2.1\nName: {name}\nVersion: 0.1\n", encoding="utf-8")
    if entry_points is not None:
        (info / "entry_points.txt").write_text(entry_points, encoding="utf-8")
    importlib.invalidate_caches()  # importlib.metadata keeps folder listings by their time (coarse)


def _found_by_importlib() -> list:
    return list(importlib.metadata.entry_points(group=registry.ENTRY_POINT_GROUP))


def test_the_quick_scan_agrees_with_importlib_metadata_here():
    assert registry.may_declare_packs() or not _found_by_importlib()
    assert registry.pack_entry_points() == _found_by_importlib()


def test_a_distribution_declaring_a_pack_is_seen_by_the_quick_scan(tmp_path, monkeypatch):
    _dist(tmp_path, "other_tool", "[console_scripts]\nother = other_tool:main\n")
    _dist(tmp_path, "no_entry_points", None)
    monkeypatch.syspath_prepend(str(tmp_path))
    found = _found_by_importlib()
    assert registry.may_declare_packs() == bool(found)  # neither declares the group
    _dist(tmp_path, "scan_demo_pack", "[drc.rules]\nscan_demo = scan_demo_pack\n")
    assert [p.name for p in _found_by_importlib()] == [p.name for p in found] + ["scan_demo"]
    assert registry.may_declare_packs()
    assert "scan_demo" in [p.name for p in registry.pack_entry_points()]


def test_a_zip_on_the_path_is_left_to_importlib_metadata(tmp_path, monkeypatch):
    import zipfile
    archive = tmp_path / "packs.zip"
    with zipfile.ZipFile(archive, "w") as z:
        z.writestr("zipped-0.1.dist-info/METADATA", "Metadata-Version: 2.1\nName: zipped\nVersion: 0.1\n")
        z.writestr("zipped-0.1.dist-info/entry_points.txt", "[drc.rules]\nzipped = zipped\n")
    monkeypatch.syspath_prepend(str(archive))
    assert "zipped" in [p.name for p in _found_by_importlib()]
    assert registry.may_declare_packs()
