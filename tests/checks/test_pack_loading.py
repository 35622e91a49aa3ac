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
import traceback
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


def test_an_error_raised_inside_importlib_points_at_the_pack_line_that_called_it(packs):
    # importlib.import_module("") raises ValueError in importlib's own frames (its Python file
    # and its frozen bootstrap, which the traceback keeps for errors other than ImportError);
    # the pack's line is the innermost frame of the pack file (Python's traceback, below).
    path = packs("inproc_backend", "import importlib\n\nbackend = importlib.import_module('')\n")
    with pytest.raises(RulePackError) as err:
        registry.registered_rules()
    e = err.value
    tb = traceback.extract_tb(e.__cause__.__traceback__)
    ours = [f for f in tb if f.filename == str(path)]
    assert ours and tb[-1].filename != str(path)  # importlib's frames come after the pack's line
    assert (e.location.file, e.location.line) == (str(path), ours[-1].lineno) == (str(path), 3)
    assert "ValueError" in e.message


def test_packs_register_in_entry_point_order_even_when_one_reads_the_registry(packs):
    # The first pack reads the catalogue while it loads (it sees the rules so far: not the
    # second pack's); importlib.metadata's order of the entry points is the catalogue's order.
    reader = GOOD.replace("inproc-demo", "inproc-reader").replace(
        "from drc.checks.ruledoc import RuleDoc\n",
        "from drc.checks.registry import registered_rules\nfrom drc.checks.ruledoc import RuleDoc\n\n"
        "SEEN = [r.id for r in registered_rules()]\n")
    packs("inproc_reader", reader)
    packs("inproc_second", GOOD.replace("inproc-demo", "inproc-second"))
    generation = registry.registry_generation()  # the first read loads the packs
    ids = [r.id for r in registry.registered_rules()]
    assert ids[-2:] == ["inproc-reader", "inproc-second"]
    seen = sys.modules["inproc_reader"].SEEN
    assert "inproc-second" not in seen and "bounce-window" in seen
    assert registry.registry_generation() == generation  # nothing registered since the first read


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


def _egg(folder, name: str, entry_points: str) -> None:
    """An egg-info folder (setuptools' older layout): PKG-INFO and entry_points.txt."""
    info = folder / f"{name}.egg-info"
    info.mkdir(parents=True)
    (info / "PKG-INFO").write_text(f"Metadata-Version: 1.0\nName: {name}\nVersion: 0.1\n", encoding="utf-8")
    (info / "entry_points.txt").write_text(entry_points, encoding="utf-8")
    importlib.invalidate_caches()


PACK = "[drc.rules]\n{0} = {0}\n"


def _scan_and_importlib(monkeypatch, path: list[str], meta_path: list | None = None):
    """(the quick scan's answer, the entry points importlib.metadata finds) with exactly this
    sys.path (and sys.meta_path): nothing installed elsewhere can take part."""
    importlib.invalidate_caches()  # before the finders change (3.11's MetadataPathFinder class cannot)
    with monkeypatch.context() as m:
        m.setattr(sys, "path", path)
        if meta_path is not None:
            m.setattr(sys, "meta_path", meta_path)
        return registry.may_declare_packs(), [p.name for p in _found_by_importlib()]


def _standard_finders(*extra) -> list:
    """sys.meta_path's import finders (none that finds distributions), then `extra`; by
    default importlib.metadata's own MetadataPathFinder (the class, as PathFinder sits on
    sys.meta_path), which reads the *-info folders on sys.path."""
    return ([f for f in sys.meta_path if not hasattr(f, "find_distributions")]
            + (list(extra) or [importlib.metadata.MetadataPathFinder]))


def _stdlib_find_distributions(*args, **kwargs):
    """PathFinder.find_distributions as the standard library writes it (3.10 to 3.12)."""
    return importlib.metadata.MetadataPathFinder.find_distributions(*args, **kwargs)


def _backport_finder():
    """The importlib_metadata backport's finder, or None where the backport is not installed.
    Importing the backport appends its finder to sys.meta_path and deletes
    PathFinder.find_distributions (its finder takes that place): both are put back."""
    import importlib.machinery
    meta_path, own = list(sys.meta_path), importlib.machinery.PathFinder.__dict__.get("find_distributions")
    try:
        import importlib_metadata
    except ImportError:
        return None
    sys.meta_path[:] = meta_path
    if own is not None and "find_distributions" not in importlib.machinery.PathFinder.__dict__:
        importlib.machinery.PathFinder.find_distributions = own
    return importlib_metadata.MetadataPathFinder()


@pytest.mark.parametrize("finder", ["path-finder", "metadata-finder", "backport"])
def test_the_standard_finders_leave_the_answer_to_the_path_scan(tmp_path, monkeypatch, finder):
    # importlib.metadata, the reference: with only this finder of distributions and a path
    # holding a distribution without packs, it finds no pack; the scan must say so too (that
    # is why it exists), and it must see a pack added to the same folder.
    import importlib.machinery
    if finder == "path-finder":  # as the standard library has it, even after the backport's import
        monkeypatch.setattr(importlib.machinery.PathFinder, "find_distributions",
                            staticmethod(_stdlib_find_distributions), raising=False)
        finders = _standard_finders(importlib.machinery.PathFinder)
    elif finder == "metadata-finder":
        finders = _standard_finders()
    else:
        backport = _backport_finder()
        if backport is None:
            pytest.skip("the importlib_metadata backport is not installed")
        finders = _standard_finders(backport)
    _dist(tmp_path, "other_tool", "[console_scripts]\nother = other_tool:main\n")
    assert _scan_and_importlib(monkeypatch, [str(tmp_path)], finders) == (False, [])
    _dist(tmp_path, "scan_pack", PACK.format("scan_pack"))
    assert _scan_and_importlib(monkeypatch, [str(tmp_path)], finders) == (True, ["scan_pack"])


class _OwnFinder:
    """Another tool's finder of distributions, finding one outside sys.path."""

    def __init__(self, info):
        self.info = info

    def find_spec(self, *args, **kwargs):
        return None

    def find_distributions(self, context=None):
        return iter([importlib.metadata.PathDistribution(self.info)])


class MetadataPathFinder(_OwnFinder):
    """The same under the name of importlib's own finder: its module is not importlib's."""


@pytest.mark.parametrize("kind", [_OwnFinder, MetadataPathFinder])
def test_another_finder_of_distributions_leaves_the_answer_to_importlib(tmp_path, monkeypatch, kind):
    # The pack's distribution is in a folder not on sys.path: only the finder knows it.
    _dist(tmp_path / "elsewhere", "found_pack", PACK.format("found_pack"))
    (tmp_path / "on_path").mkdir()
    finder = kind(tmp_path / "elsewhere" / "found_pack-0.1.dist-info")
    finders = _standard_finders(importlib.metadata.MetadataPathFinder, finder)
    assert _scan_and_importlib(monkeypatch, [str(tmp_path / "on_path")], finders) == (True, ["found_pack"])


def test_an_empty_path_entry_is_the_working_folder(tmp_path, monkeypatch):
    # "" on sys.path is the current folder, for imports and for importlib.metadata alike.
    _dist(tmp_path, "here_pack", PACK.format("here_pack"))
    monkeypatch.chdir(tmp_path)
    assert _scan_and_importlib(monkeypatch, [""], _standard_finders()) == (True, ["here_pack"])


def test_an_egg_info_folder_declaring_a_pack_is_seen(tmp_path, monkeypatch):
    _egg(tmp_path, "eggy_pack", PACK.format("eggy_pack"))
    assert _scan_and_importlib(monkeypatch, [str(tmp_path)], _standard_finders()) == (True, ["eggy_pack"])


def test_a_missing_folder_on_the_path_does_not_end_the_scan(tmp_path, monkeypatch):
    _dist(tmp_path / "there", "later_pack", PACK.format("later_pack"))
    path = [str(tmp_path / "not_there"), str(tmp_path / "there")]
    assert _scan_and_importlib(monkeypatch, path, _standard_finders()) == (True, ["later_pack"])


def test_entry_points_that_cannot_be_read_are_left_to_importlib(tmp_path, monkeypatch):
    # An entry_points.txt that is a link to itself: importlib.metadata cannot read it either
    # and raises (ELOOP is not among the errors it passes over); the scan must not answer
    # "no packs" in its place.
    _dist(tmp_path, "loop_pack", None)
    os.symlink("entry_points.txt", tmp_path / "loop_pack-0.1.dist-info" / "entry_points.txt")
    importlib.invalidate_caches()
    with monkeypatch.context() as m:
        m.setattr(sys, "path", [str(tmp_path)])
        m.setattr(sys, "meta_path", _standard_finders())
        with pytest.raises(OSError):
            _found_by_importlib()
        assert registry.may_declare_packs()
