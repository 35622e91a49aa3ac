"""The pre-commit hook definition works when a team adds it to their repository.

Installs the hook from this repository into a temporary git repository with
the pre-commit framework (`pre-commit try-repo`), and runs it on a clean and
on a failing board.
"""

from __future__ import annotations

import os
import shutil
import subprocess
import sys
from pathlib import Path

import pytest

from tests.cli.helpers import CLEAN, ERROR, ROOT

pytestmark = pytest.mark.slow


def _git(*args, cwd):
    subprocess.run(["git", *args], cwd=cwd, check=True, capture_output=True)


# A board whose series resistor lives in an included model file (as schematic tools export it).
BOARD = CLEAN.replace("R2 n1 in 22k\n", "XR2 n1 in KEYRC\n").replace("clean key board\n",
                                                                   "clean key board\n.include models/keys.lib\n")
MODELS = ".subckt KEYRC a b\nR1 a b {value}\n.ends\n"


def test_hook_runs_in_a_temporary_repository(tmp_path: Path):
    """The hook checks a changed board, fails a bad one, and re-checks a board when only a
    model file it includes changes (the file pattern takes .lib files too)."""
    if shutil.which("git") is None:
        pytest.skip("git is not installed")
    repo = tmp_path / "team"
    (repo / "models").mkdir(parents=True)
    _git("init", "-q", cwd=repo)
    (repo / "panel.cir").write_text(BOARD)
    (repo / "models" / "keys.lib").write_text(MODELS.format(value="22k"))
    (repo / "other.cir").write_text(CLEAN)  # includes nothing: a .lib change leaves it alone
    env = dict(os.environ, PRE_COMMIT_HOME=str(tmp_path / "cache"), GIT_AUTHOR_NAME="t",
               GIT_AUTHOR_EMAIL="t@example.invalid", GIT_COMMITTER_NAME="t",
               GIT_COMMITTER_EMAIL="t@example.invalid")
    _git("add", ".", cwd=repo)

    def hook(*files: str) -> subprocess.CompletedProcess:
        run = [sys.executable, "-m", "pre_commit", "try-repo", str(ROOT), "drc-switch-inputs", "--files", *files]
        return subprocess.run(run, cwd=repo, env=env, capture_output=True, text=True, timeout=900)

    ok = hook("panel.cir")
    assert ok.returncode == 0, ok.stdout[-3000:] + ok.stderr[-3000:]
    assert "drc" in ok.stdout
    # Only the model file changes: its series resistor drops to 100 Ω, so the RC (100 Ω,
    # 1.2 µF: 0.12 ms) no longer spans the tactile class's bounce. The board is re-checked.
    (repo / "models" / "keys.lib").write_text(MODELS.format(value="100"))
    _git("add", ".", cwd=repo)
    bad = hook("models/keys.lib")
    assert bad.returncode == 1, bad.stdout[-3000:]
    assert "panel.cir" in bad.stdout and "bounce-window" in bad.stdout
    assert "other.cir" not in bad.stdout
    # A board that fails on its own.
    (repo / "other.cir").write_text(ERROR)
    _git("add", ".", cwd=repo)
    bad = hook("other.cir")
    assert bad.returncode == 1, bad.stdout[-3000:]
    assert "undebounced-input" in bad.stdout
