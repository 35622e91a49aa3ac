"""Memory asked for matches the input: a netlist (and its `*@drc` annotations) is read
into a buffer of the file's own size, once.

Asking for a buffer of the size limit (256 MiB for a netlist, 2 GiB for the old
annotation re-read) costs that much address space even for a 1 kB board and
fails under `ulimit -v` or strict overcommit. The first test runs a check in a
child process whose address space is capped at what it already uses plus
100 MiB: room for a small board's check, none for a buffer of the limit. The
others count what the reader asks of the operating system.
"""

from __future__ import annotations

import os
import subprocess
import sys
import textwrap

import pytest

import drc.netlist.lines as lines
from drc.pipeline import CheckOptions, check_board_in_memory
from tests.hostile.make_corpus import GOOD_STAGE, HEADER
from tests.hostile.runner import REPO

ANNOTATED = (HEADER + "*@drc contact SW1 class=tactile bounce=7ms\n" + GOOD_STAGE
             + ".include parts.inc\n")
INCLUDED = "* models\n*@drc debounce U1:1 20ms\n.model DX D\n"


def _board(folder):
    (folder / "b.cir").write_text(ANNOTATED)
    (folder / "parts.inc").write_text(INCLUDED)
    return folder / "b.cir"


@pytest.mark.skipif(not sys.platform.startswith("linux"), reason="reads /proc/self/status (Linux)")
def test_a_small_board_checks_under_a_tight_address_space_limit(tmp_path):
    board = _board(tmp_path)
    script = textwrap.dedent(f"""
        import resource
        from drc.pipeline import CheckOptions, check_board_in_memory
        options = CheckOptions(propose_fixes=False)
        check_board_in_memory({str(board)!r}, options)   # every lazy import done once
        status = open("/proc/self/status").read()
        size_kb = int(next(l for l in status.splitlines() if l.startswith("VmSize:")).split()[1])
        limit = size_kb * 1024 + 100 * 2**20
        resource.setrlimit(resource.RLIMIT_AS, (limit, limit))
        check = check_board_in_memory({str(board)!r}, options)
        print(len(check.results), sorted(check.board.contacts))
    """)
    env = dict(os.environ, PYTHONPATH=str(REPO), OPENBLAS_NUM_THREADS="1")
    proc = subprocess.run([sys.executable, "-c", script], capture_output=True, text=True,
                          env=env, timeout=120)
    assert proc.returncode == 0, proc.stderr[-2000:]
    assert proc.stdout.split()[0] == "1", proc.stdout


def test_reads_ask_for_the_file_size_not_the_limit(tmp_path, monkeypatch):
    board = _board(tmp_path)
    asked: list[int] = []
    real_read = os.read

    def counting_read(fd, size):
        asked.append(size)
        return real_read(fd, size)

    monkeypatch.setattr(lines.os, "read", counting_read)
    check_board_in_memory(board, CheckOptions(propose_fixes=False))
    biggest_file = max(len(ANNOTATED), len(INCLUDED))
    assert asked and max(asked) <= biggest_file + 1, asked


def test_each_file_is_read_once_annotations_included(tmp_path, monkeypatch):
    board = _board(tmp_path)
    reads: list[str] = []
    real = lines.read_regular

    def counting(path, *args, **kwargs):
        reads.append(os.path.basename(path))
        return real(path, *args, **kwargs)

    monkeypatch.setattr(lines, "read_regular", counting)
    check = check_board_in_memory(board, CheckOptions(propose_fixes=False))
    assert sorted(reads) == ["b.cir", "parts.inc"]
    # ...and the annotations of both files were still found, at their own lines.
    assert [(os.path.basename(f), n) for f, n, _ in check.board.netlist.annotation_lines] == \
        [("b.cir", 2), ("parts.inc", 2)]
    assert check.results[0].stage.contact.bounce_s == pytest.approx(0.007)


def test_a_file_growing_while_read_is_still_bounded(tmp_path):
    path = tmp_path / "g.cir"
    path.write_bytes(b"x" * 100)
    fd = os.open(path, os.O_RDONLY)
    try:
        with open(path, "ab") as grow:   # the file grows after its size was taken
            grow.write(b"y" * 5000)
        data = lines._read_sized(fd, 100, 1000)
    finally:
        os.close(fd)
    assert len(data) == 1001   # one byte past the limit: the caller refuses the file
