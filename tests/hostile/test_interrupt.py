"""Nothing is lost: Ctrl-C ends a run promptly with status 130 and one line, and
report and baseline files are replaced whole or not at all.

The interrupt test starts the real console entry point on a large generated
board, sends SIGINT once the run is under way, and checks the exit status,
the single-line message and that the previous report file is intact. The
timeouts only guard against a hang; nothing here asserts a duration.

SIGTERM and SIGHUP (and SIGINT again) are sent at known points of a report's
write: the console entry point runs in a child whose os.write or os.fsync
sends the signal to its own process in the middle of writing the temporary
file, or once it is written and synced but not yet renamed. The old report
must stay whole, no temporary file may remain, and the exit status is 128 +
the signal's number (130 for Ctrl-C, as before).
"""

from __future__ import annotations

import os
import signal
import subprocess
import sys
import textwrap
import time

import pytest

from drc.atomic import write_atomic
from tests.hostile.make_corpus import large_board
from tests.hostile.runner import ENTRY, REPO

OLD_REPORT = '{"previous": "report"}\n'


def _start(folder, *args):
    env = dict(os.environ, PYTHONPATH=str(REPO) + os.pathsep + os.environ.get("PYTHONPATH", ""))
    return subprocess.Popen([sys.executable, *ENTRY, "check", *args], cwd=folder,
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
    proc = subprocess.run([sys.executable, *ENTRY, "check", "b.cir", "--baseline",
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


_SIGNAL_AT = textwrap.dedent("""
    import os, signal, sys
    signum, point = int(sys.argv[1]), sys.argv[2]
    real_write, real_fsync = os.write, os.fsync
    def write(fd, data):
        if point == "mid-write" and len(data) > 100:   # the report, not a message
            written = real_write(fd, bytes(data[:len(data) // 2]))
            os.kill(os.getpid(), signum)   # the handler runs before the next line
            return written
        return real_write(fd, data)
    def fsync(fd):
        real_fsync(fd)
        if point == "before-rename":
            os.kill(os.getpid(), signum)
    os.write, os.fsync = write, fsync
    from drc.cli.parser import main
    sys.exit(main(["check", "b.cir", "-o", "json:report.json", "--no-fixes"]))
""")


@pytest.mark.skipif(os.name != "posix", reason="sends POSIX signals")
@pytest.mark.parametrize("point", ["mid-write", "before-rename"])
@pytest.mark.parametrize("name, status, message", [
    ("SIGTERM", 143, "drc: terminated by SIGTERM"),
    ("SIGHUP", 129, "drc: terminated by SIGHUP"),
    ("SIGINT", 130, "drc: interrupted"),
])
def test_a_signal_during_a_write_keeps_the_old_report_and_no_temporary_file(
        tmp_path, point, name, status, message):
    from tests.hostile.make_corpus import GOOD_STAGE, HEADER
    (tmp_path / "b.cir").write_text(HEADER + GOOD_STAGE)
    (tmp_path / "report.json").write_text(OLD_REPORT)
    env = dict(os.environ, PYTHONPATH=str(REPO))
    proc = subprocess.run([sys.executable, "-c", _SIGNAL_AT, str(int(getattr(signal, name))), point],
                          cwd=tmp_path, env=env, capture_output=True, timeout=120,
                          stdin=subprocess.DEVNULL)
    err = proc.stderr.decode("utf-8", "replace")
    assert proc.returncode == status, err
    assert [line for line in err.splitlines() if line.strip()] == [message]
    assert (tmp_path / "report.json").read_text() == OLD_REPORT
    assert sorted(p.name for p in tmp_path.iterdir()) == ["b.cir", "report.json"]
