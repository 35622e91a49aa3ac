"""Nothing is lost: Ctrl-C ends a run promptly with status 130 and one line, and
report and baseline files are replaced whole or not at all.

The interrupt test starts the real console entry point on a large generated
board, sends SIGINT once the run is under way, and checks the exit status,
the single-line message and that the previous report file is intact. The
timeouts only guard against a hang; nothing here asserts a duration.
"""

from __future__ import annotations

import os
import signal
import subprocess
import sys
import time

import pytest

from drc.atomic import write_atomic
from tests.hostile.make_corpus import large_board
from tests.hostile.runner import REPO

OLD_REPORT = '{"previous": "report"}\n'


def _start(folder, *args):
    env = dict(os.environ, PYTHONPATH=str(REPO) + os.pathsep + os.environ.get("PYTHONPATH", ""))
    return subprocess.Popen([sys.executable, "-m", "drc.cli", "check", *args], cwd=folder,
                            env=env, stdin=subprocess.DEVNULL, stdout=subprocess.PIPE,
                            stderr=subprocess.PIPE)


@pytest.mark.skipif(os.name != "posix", reason="sends SIGINT")
def test_ctrl_c_exits_130_with_one_line_and_keeps_the_old_report(tmp_path):
    board = tmp_path / "big.cir"
    board.write_text(large_board(30000))  # far more than 2 s of work, even on a fast machine
    report = tmp_path / "report.json"
    report.write_text(OLD_REPORT)
    before = board.read_bytes()
    proc = _start(tmp_path, "big.cir", "-o", "json:report.json", "--no-fixes")
    time.sleep(2.0)  # past interpreter start-up: the run is reading or checking the board
    assert proc.poll() is None, "the board was checked before it could be interrupted: make it larger"
    proc.send_signal(signal.SIGINT)
    try:
        out, err = proc.communicate(timeout=30)
    except subprocess.TimeoutExpired:
        proc.kill()
        proc.communicate()
        pytest.fail("drc did not stop after Ctrl-C (SIGINT)")
    err = err.decode("utf-8", "replace")
    assert proc.returncode == 130, err
    assert "Traceback" not in err
    lines = [line for line in err.splitlines() if line.strip()]
    assert lines == ["drc: interrupted"], lines
    assert report.read_text() == OLD_REPORT
    assert board.read_bytes() == before
    assert sorted(p.name for p in tmp_path.iterdir()) == ["big.cir", "report.json"]


def test_failed_run_keeps_previous_report_and_baseline(tmp_path):
    """A run that fails on bad input still writes (atomically) or leaves the old file whole."""
    (tmp_path / "b.cir").write_text("t\nR1 a b {1/0}\n")
    (tmp_path / "report.json").write_text(OLD_REPORT)
    env = dict(os.environ, PYTHONPATH=str(REPO))
    proc = subprocess.run([sys.executable, "-m", "drc.cli", "check", "b.cir", "--baseline",
                           "missing.json", "-o", "json:report.json"], cwd=tmp_path, env=env,
                          capture_output=True, timeout=60)
    assert proc.returncode == 2
    assert b"Traceback" not in proc.stderr
    assert (tmp_path / "report.json").read_text() == OLD_REPORT
    assert sorted(p.name for p in tmp_path.iterdir()) == ["b.cir", "report.json"]


@pytest.mark.parametrize("failure", [KeyboardInterrupt, OSError])
def test_interrupted_atomic_write_leaves_the_old_file(tmp_path, monkeypatch, failure):
    target = tmp_path / "baseline.json"
    target.write_text(OLD_REPORT)

    def broken_replace(src, dst):
        raise failure("interrupted at the rename")

    monkeypatch.setattr(os, "replace", broken_replace)
    with pytest.raises((KeyboardInterrupt, Exception)):
        write_atomic(target, '{"new": 1}\n' * 1000)
    assert target.read_text() == OLD_REPORT
    assert os.listdir(tmp_path) == ["baseline.json"]  # no temporary file left


def test_refuses_to_replace_an_existing_netlist_or_config(tmp_path):
    from drc.errors import UsageError
    for name in ("other.cir", "drc.toml", "pyproject.toml", "models.lib"):
        path = tmp_path / name
        path.write_text("keep\n")
        with pytest.raises(UsageError, match="never modified"):
            write_atomic(path, "report")
        assert path.read_text() == "keep\n"
