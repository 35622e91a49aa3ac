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


def test_hook_runs_in_a_temporary_repository(tmp_path: Path):
    if shutil.which("git") is None:
        pytest.skip("git is not installed")
    repo = tmp_path / "team"
    repo.mkdir()
    _git("init", "-q", cwd=repo)
    (repo / "panel.cir").write_text(CLEAN)
    env = dict(os.environ, PRE_COMMIT_HOME=str(tmp_path / "cache"), GIT_AUTHOR_NAME="t",
               GIT_AUTHOR_EMAIL="t@example.invalid", GIT_COMMITTER_NAME="t",
               GIT_COMMITTER_EMAIL="t@example.invalid")
    _git("add", "panel.cir", cwd=repo)
    run = [sys.executable, "-m", "pre_commit", "try-repo", str(ROOT), "drc-switch-inputs", "--files", "panel.cir"]
    ok = subprocess.run(run, cwd=repo, env=env, capture_output=True, text=True, timeout=900)
    assert ok.returncode == 0, ok.stdout[-3000:] + ok.stderr[-3000:]
    assert "drc" in ok.stdout
    (repo / "panel.cir").write_text(ERROR)
    _git("add", "panel.cir", cwd=repo)
    bad = subprocess.run(run, cwd=repo, env=env, capture_output=True, text=True, timeout=900)
    assert bad.returncode == 1, bad.stdout[-3000:]
    assert "undebounced-input" in bad.stdout
