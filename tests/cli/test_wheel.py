"""A built wheel works from any folder: grammars/ and rules/ travel inside it.

Builds the wheel, installs it into a fresh virtual environment (reusing the
already-installed dependencies through --system-site-packages, so the test
needs no network), and runs the console script from a temporary folder.
"""

from __future__ import annotations

import os
import shutil
import subprocess
import sys
import venv
from pathlib import Path

import pytest

from tests.cli.helpers import ROOT

pytestmark = pytest.mark.slow


def test_wheel_installs_and_checks_a_demo_board(tmp_path: Path):
    dist = tmp_path / "dist"
    build = subprocess.run([sys.executable, "-m", "pip", "wheel", "--no-deps", "--no-build-isolation",
                            "-w", str(dist), str(ROOT)], capture_output=True, text=True, timeout=300)
    if build.returncode != 0 and "hatchling" in (build.stdout + build.stderr):
        build = subprocess.run([sys.executable, "-m", "pip", "wheel", "--no-deps", "-w", str(dist),
                                str(ROOT)], capture_output=True, text=True, timeout=300)
    assert build.returncode == 0, build.stdout[-2000:] + build.stderr[-2000:]
    wheel = next(dist.glob("*.whl"))
    env_dir = tmp_path / "venv"
    venv.EnvBuilder(system_site_packages=True, with_pip=True).create(env_dir)
    python = env_dir / "bin" / "python"
    install = subprocess.run([str(python), "-m", "pip", "install", "--no-deps", "-q", str(wheel)],
                             capture_output=True, text=True, timeout=300)
    assert install.returncode == 0, install.stderr[-2000:]
    work = tmp_path / "elsewhere"
    work.mkdir()
    shutil.copy(ROOT / "boards" / "lx24" / "remote_pod.cir", work / "board.cir")
    env = {k: v for k, v in os.environ.items() if k not in ("PYTHONPATH",)}
    drc = env_dir / "bin" / "drc"
    where = subprocess.run([str(python), "-c", "import drc, drc.datafiles as d; print(drc.__file__); "
                            "print(d.data_folder('rules')); print(d.data_folder('grammars'))"],
                           cwd=work, capture_output=True, text=True, env=env)
    assert str(env_dir) in where.stdout, where.stdout + where.stderr  # the wheel, not the source tree
    version = subprocess.run([str(drc), "--version"], cwd=work, capture_output=True, text=True, env=env)
    assert version.returncode == 0 and version.stdout.startswith("drc ")
    check = subprocess.run([str(drc), "check", "board.cir", "--format", "json"], cwd=work,
                           capture_output=True, text=True, env=env, timeout=300)
    assert check.returncode == 0, check.stdout[-2000:] + check.stderr[-2000:]
    assert '"drc-report/1"' in check.stdout
