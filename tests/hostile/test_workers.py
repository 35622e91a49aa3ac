"""Workers follow the work: `--jobs N` never starts more workers than boards or
processors, says when it lowered a request, and an absurd N neither hangs nor
floods the machine with processes. Chunking keeps the report's order and
bytes whatever the number of workers.
"""

from __future__ import annotations

import concurrent.futures
import json
import os
import shutil
from pathlib import Path

import pytest

from drc.cli import commands
from drc.pipeline import chunks
from tests.cli.helpers import CLEAN, ERROR, WARNING_ONLY, drc

ROOT = Path(__file__).resolve().parents[2]


@pytest.fixture
def four_boards(tmp_path: Path) -> Path:
    (tmp_path / ".git").mkdir()  # config discovery stops here
    for i, text in enumerate((CLEAN, WARNING_ONLY, ERROR, CLEAN)):
        (tmp_path / f"b{i}.cir").write_text(text)
    return tmp_path


def _processors() -> int:
    try:
        return len(os.sched_getaffinity(0))
    except AttributeError:
        return os.cpu_count() or 1


@pytest.mark.parametrize("jobs, boards", [(300, 4), (100_000, 4), (2, 4), (1, 4), (8, 1)])
def test_worker_count_never_exceeds_boards_or_processors(jobs, boards):
    workers, note = commands.worker_count(jobs, boards)
    assert 1 <= workers <= min(jobs, boards, _processors())
    # a note exactly when the request was lowered, naming what lowered it
    assert (note is not None) == (workers < jobs)
    if note:
        assert f"--jobs {jobs} lowered to {workers}" in note


def test_jobs_300_on_four_boards_starts_at_most_four_workers(four_boards, monkeypatch):
    """The pool is asked for no more workers than boards and processors (not 300)."""
    asked: list[int] = []
    real = concurrent.futures.ProcessPoolExecutor

    class Counting(real):  # type: ignore[misc, valid-type]
        def __init__(self, max_workers=None, **kwargs):
            asked.append(max_workers)
            super().__init__(max_workers=max_workers, **kwargs)

    monkeypatch.setattr(concurrent.futures, "ProcessPoolExecutor", Counting)
    workers, _ = commands.worker_count(300, 4)
    executor = commands._executor(workers)
    try:
        assert asked == ([] if workers == 1 else [workers])
    finally:
        if executor is not None:
            executor.shutdown()
    assert all(n <= min(4, _processors()) for n in asked)


@pytest.mark.parametrize("jobs", ["300", "100000"])
def test_huge_jobs_finishes_says_so_and_matches_one_job(four_boards, jobs):
    """`--jobs 100000` used to hang; the timeout only guards the test run, no time is asserted."""
    one = drc("check", str(four_boards), "--format", "json", "--no-fixes", "--jobs", "1", timeout=300)
    many = drc("check", str(four_boards), "--format", "json", "--no-fixes", "--jobs", jobs, timeout=300)
    assert many.returncode == one.returncode == 1
    assert f"--jobs {jobs} lowered to" in many.stderr
    assert "internal error" not in many.stderr
    assert many.stdout == one.stdout


def test_chunks_keep_every_board_once_and_group_copies():
    files = [f"f{i}" for i in range(40)]
    groups = {f: f"g{int(f[1:]) % 4}" for f in files}  # four designs, ten copies each
    parts = chunks(files, 2, group=groups.__getitem__)
    assert sorted(i for part in parts for i in part) == list(range(40))
    for part in parts:  # each design's copies stay together (ten fit in twice a share of five)
        assert len({groups[files[i]] for i in part}) == 1
    assert len(chunks(files, 2, group=str)) == 8  # distinct boards: about four chunks per worker


def test_folder_of_copies_same_report_with_workers(tmp_path):
    """The demo boards copied three times: the report is byte-identical with one or two workers."""
    folder = tmp_path / "archive"
    folder.mkdir()
    (tmp_path / ".git").mkdir()
    for board in sorted((ROOT / "boards" / "lx24").glob("*.cir")):
        for copy in range(3):
            shutil.copy(board, folder / f"{board.stem}_{copy}.cir")
    shutil.copy(ROOT / "boards" / "lx24" / "drc.toml", folder / "drc.toml")
    one = drc("check", str(folder), "--format", "json", "--no-fixes", "--jobs", "1", "--report-only")
    two = drc("check", str(folder), "--format", "json", "--no-fixes", "--jobs", "2", "--report-only")
    assert one.returncode == two.returncode == 0
    assert one.stdout == two.stdout
    assert len(json.loads(one.stdout)["boards"]) == 12
