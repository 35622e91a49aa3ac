"""The result cache on disk: same bytes as a fresh check, misses on every change that
matters, and an entry that is damaged or foreign is ignored, never trusted.

The outside reference for "same result" is a run with the cache off (`--no-cache`
or CheckOptions(result_cache=False)); every test keeps its cache in tmp_path
(DRC_CACHE_DIR), never in the user's cache folder.
"""

from __future__ import annotations

import json
import shutil
from pathlib import Path

import pytest

from drc import diskcache, pipeline
from drc.caching import clear_caches
from drc.pipeline import CheckOptions, check_board
from tests.cli.helpers import drc

ROOT = Path(__file__).resolve().parents[1]

BOARD = """keys with an included filter
V1 vcc 0 DC 5
.include filter.inc
SW1 k1 0 TACTILE
XU1 in1 o1 0 0 0 0 0 0 0 0 0 0 0 vcc 74HC14
.end
"""
FILTER = "R1 vcc k1 10k\nR2 k1 in1 22k\nC1 in1 0 1u\n"


@pytest.fixture
def cache(tmp_path, monkeypatch) -> Path:
    folder = tmp_path / "cache"
    monkeypatch.setenv("DRC_CACHE_DIR", str(folder))
    clear_caches()
    return folder


@pytest.fixture
def board(tmp_path) -> Path:
    project = tmp_path / "project"
    project.mkdir()
    (project / ".git").mkdir()  # config discovery stops here
    (project / "filter.inc").write_text(FILTER)
    path = project / "keys.cir"
    path.write_text(BOARD)
    return path


@pytest.fixture
def fresh_checks(monkeypatch) -> list[str]:
    """The boards really checked (not taken from the cache), in order."""
    checked: list[str] = []
    real = pipeline._check_board_now

    def counting(path, options):
        checked.append(str(path))
        return real(path, options)

    monkeypatch.setattr(pipeline, "_check_board_now", counting)
    return checked


CACHED = CheckOptions(result_cache=True, propose_fixes=False)
UNCACHED = CheckOptions(result_cache=False, propose_fixes=False)


def test_second_check_comes_from_the_cache_and_equals_a_fresh_one(cache, board, fresh_checks):
    first = check_board(board, CACHED)
    second = check_board(board, CACHED)
    assert fresh_checks == [str(board)]  # the second came from disk
    assert second == first == check_board(board, UNCACHED)
    assert any(cache.rglob("*.json"))


def test_a_changed_included_file_misses(cache, board, fresh_checks):
    before = check_board(board, CACHED)
    (board.parent / "filter.inc").write_text(FILTER.replace("1u", "100n"))
    after = check_board(board, CACHED)
    assert len(fresh_checks) == 2
    assert after == check_board(board, UNCACHED) != before


def test_a_changed_config_misses(cache, board, fresh_checks):
    check_board(board, CACHED)
    (board.parent / "drc.toml").write_text('[limits]\nlatency-limit = "10 ms"\n')
    after = check_board(board, CACHED)
    assert len(fresh_checks) == 2
    assert after == check_board(board, UNCACHED)
    assert after.report.config_path


def test_changed_rules_data_misses(cache, board, fresh_checks, tmp_path, monkeypatch):
    check_board(board, CACHED)
    rules = tmp_path / "rules"
    shutil.copytree(ROOT / "rules", rules)
    with open(rules / "limits.toml", "a", encoding="utf-8") as handle:
        handle.write("\n# an edit of the rules data\n")
    import drc.datafiles
    real = drc.datafiles.data_folder
    monkeypatch.setattr(drc.datafiles, "data_folder", lambda name: rules if name == "rules" else real(name))
    clear_caches()  # the rules digest is remembered per process
    check_board(board, CACHED)
    assert len(fresh_checks) == 2


def test_other_options_miss(cache, board, fresh_checks):
    check_board(board, CACHED)
    check_board(board, CheckOptions(result_cache=True, propose_fixes=False, skip_rules=("slow-edge",)))
    assert len(fresh_checks) == 2


def _entries(cache: Path) -> list[Path]:
    return sorted(p for p in cache.rglob("*.json") if "board" in p.parts)


def _damage_payload(data: bytes) -> bytes:
    return data[:-20] + b"0" * 20


def _truncate(data: bytes) -> bytes:
    return data[: len(data) // 2]


def _foreign_key(data: bytes) -> bytes:
    head, _, payload = data.partition(b"\n")
    header = json.loads(head)
    header["key"] = "0" * 64
    return json.dumps(header).encode() + b"\n" + payload


def _foreign_format(data: bytes) -> bytes:
    head, _, payload = data.partition(b"\n")
    header = json.loads(head)
    header["format"] = "someone-else/9"
    return json.dumps(header).encode() + b"\n" + payload


def _hostile_class(data: bytes) -> bytes:
    """A consistent entry (checksum recomputed) that names a class outside drc."""
    import hashlib
    head, _, _ = data.partition(b"\n")
    header = json.loads(head)
    payload = json.dumps({"~d": "os:system", "v": ["echo owned"]}).encode()
    header["sha256"] = hashlib.sha256(payload).hexdigest()
    return json.dumps(header).encode() + b"\n" + payload


@pytest.mark.parametrize("damage", [_damage_payload, _truncate, _foreign_key, _foreign_format, _hostile_class,
                                    lambda data: b"", lambda data: b"\xff\xfe not json at all\n{}"])
def test_a_damaged_or_foreign_entry_is_ignored(cache, board, fresh_checks, damage):
    first = check_board(board, CACHED)
    (entry,) = _entries(cache)
    entry.write_bytes(damage(entry.read_bytes()))
    again = check_board(board, CACHED)
    assert len(fresh_checks) == 2  # checked afresh, not read from the damaged entry
    assert again == first


def test_decode_builds_only_drc_records():
    for name in ("os:system", "builtins:eval", "drc.cli.__main__:main", "drc:__version__",
                 "drc.pipeline:check_board", "drc.pipeline:Path"):
        with pytest.raises((ValueError, TypeError, AttributeError)):
            diskcache.decode({"~d": name, "v": []})
    summary = check_board(ROOT / "boards" / "lx24" / "remote_pod.cir", UNCACHED)
    assert diskcache.decode(json.loads(json.dumps(diskcache.encode(summary)))) == summary


def test_cli_cached_and_uncached_reports_are_byte_identical(tmp_path, monkeypatch):
    folder = tmp_path / "boards"
    shutil.copytree(ROOT / "boards" / "lx24", folder)
    (tmp_path / ".git").mkdir()
    env_cache = tmp_path / "cli-cache"
    monkeypatch.setenv("DRC_CACHE_DIR", str(env_cache))
    for fmt in ("json", "text", "sarif"):
        args = ("check", str(folder), "--format", fmt, "--report-only", "--no-fixes")
        fresh = drc(*args, "--no-cache")
        first = drc(*args)
        second = drc(*args)
        assert fresh.returncode == first.returncode == second.returncode == 0
        assert fresh.stdout == first.stdout == second.stdout
    assert len(list(env_cache.rglob("*.json"))) >= 4


def test_rule_library_from_the_cache_equals_the_parsed_one(cache):
    """The library read back from its cache entry has the content of one parsed from
    rules/*.toml (the fingerprint digests every record), and a damaged entry is re-parsed."""
    from drc.datafiles import data_folder
    from drc.library.catalogue import _load_folder, load_library
    parsed = _load_folder(data_folder("rules"))
    first = load_library()
    (entry,) = sorted(p for p in cache.rglob("*.json") if "library" in p.parts)
    clear_caches()
    from_disk = load_library()
    assert from_disk is not first and from_disk.fingerprint == first.fingerprint == parsed.fingerprint
    assert from_disk.records == parsed.records
    # The entry keeps the fingerprint with the records: the records read back digest to it.
    from drc.library.catalogue import Library
    assert Library(*from_disk.records).fingerprint == from_disk.fingerprint
    entry.write_bytes(entry.read_bytes()[:-10])
    clear_caches()
    assert load_library().fingerprint == parsed.fingerprint


def test_an_included_file_turned_into_a_fifo_is_not_read_by_the_cache(cache, board, fresh_checks):
    """Validating an entry never opens a FIFO for a blocking read (it would hang); the
    board is checked afresh and the reader reports the FIFO."""
    import os
    check_board(board, CACHED)
    include = board.parent / "filter.inc"
    include.unlink()
    os.mkfifo(include)
    again = check_board(board, CACHED)
    assert len(fresh_checks) == 2
    assert again.failed and "filter.inc" in again.report.error


def test_the_cache_is_pruned_least_recently_used_first(cache):
    """Past the size limit, the entries used longest ago go first, down to three quarters."""
    import os
    for i in range(8):
        assert diskcache.store("board", f"{i:064d}", "x" * 1000)
    paths = sorted(cache.glob("board/*/*.json"))
    assert len(paths) == 8
    size = paths[0].stat().st_size
    for i in range(8):  # entry i last used i hours after entry 0: entry 0 the oldest
        path = cache / "board" / "00" / f"{i:064d}.json"
        os.utime(path, (1_000_000 + 3600 * i, 1_000_000 + 3600 * i))
    assert diskcache.load("board", f"{0:064d}") == "x" * 1000  # entry 0 used again now: kept
    diskcache.prune("board", limit=6 * size, force=True)
    kept = sorted(int(p.stem) for p in cache.glob("board/*/*.json"))
    assert kept == [0, 5, 6, 7]  # at most 4.5 entries' bytes stay: 1 to 4 were used longest ago


def test_every_demo_board_is_read_back_from_the_cache(cache, fresh_checks):
    """A second check of each demo board (fixes on, as the command line runs) comes from
    disk and equals a fresh one: no record of theirs holds a value the cache refuses
    (a numpy scalar in a figure once made one board a miss on every re-run)."""
    boards = sorted((ROOT / "boards" / "lx24").glob("*.cir"))
    options = CheckOptions(result_cache=True)
    first = [check_board(b, options) for b in boards]
    assert [check_board(b, options) for b in boards] == first
    assert fresh_checks == [str(b) for b in boards]


def test_a_float_subclass_is_kept_as_the_float_it_equals():
    """numpy's float64 is a float (numpy's documentation: it subclasses Python's float);
    the cache keeps it as that plain float instead of refusing the entry."""
    import numpy as np
    back = diskcache.decode(json.loads(json.dumps(diskcache.encode((np.float64(52.5), np.float64("inf"))))))
    assert back == (52.5, float("inf")) and all(type(x) is float for x in back)
    with pytest.raises(TypeError):
        diskcache.encode(np.int64(3))  # not an int subclass: refused, never guessed


_IMPORTED = """import sys
from drc.cli.parser import main
status = main(sys.argv[1:])
sys.stdout.write("\\nIMPORTED " + " ".join(m for m in ("numpy", "scipy", "lark", "importlib.metadata")
                                            if m in sys.modules) + "\\n")
"""


def test_a_run_from_the_cache_imports_no_solver(tmp_path):
    """A run whose boards all come from the result cache pays start-up, the entries and
    the report: it never imports numpy or scipy (the solvers'), lark (the grammar's) or
    importlib.metadata (rule packs are looked up without it where none is installed)."""
    import os
    import subprocess
    import sys
    folder = tmp_path / "boards"
    shutil.copytree(ROOT / "boards" / "lx24", folder)
    (tmp_path / ".git").mkdir()
    env = dict(os.environ, DRC_CACHE_DIR=str(tmp_path / "cache"))
    args = [sys.executable, "-c", _IMPORTED, "check", str(folder), "--format", "json", "--report-only"]
    first = subprocess.run(args, env=env, capture_output=True, text=True, timeout=300)
    second = subprocess.run(args, env=env, capture_output=True, text=True, timeout=300)
    assert first.returncode == second.returncode == 0, second.stderr
    assert "numpy" in first.stdout.rpartition("IMPORTED")[2]  # the first run analysed the boards
    assert second.stdout.rpartition("IMPORTED")[2].split() == []
    assert second.stdout.rpartition("\nIMPORTED")[0] == first.stdout.rpartition("\nIMPORTED")[0]
