"""Outside rule packs load through the "drc.rules" entry-point group.

Builds two tiny packs in a temporary folder (a pyproject declaring the entry
point and one module registering a rule with `@rule(RuleDoc(...))`), installs
them with pip into a fresh virtual environment (reusing the installed
dependencies through --system-site-packages, so no network is needed; drc
itself comes from this source tree through PYTHONPATH), and runs the real
command line there: a good pack's rule is listed, shown in the handbook and fires in a
check; a broken pack is one located error with exit status 2, no traceback.
"""

from __future__ import annotations

import json
import os
import shutil
import subprocess
import venv
from pathlib import Path

import pytest

from tests.cli.helpers import ROOT

pytestmark = pytest.mark.slow

PYPROJECT = """[build-system]
requires = ["hatchling"]
build-backend = "hatchling.build"

[project]
name = "{name}"
version = "0.1.0"

[project.entry-points."drc.rules"]
{entry} = "{module}"

[tool.hatch.build.targets.wheel]
packages = ["{module}"]
"""

GOOD_RULE = '''"""A demonstration pack: one note on every stage."""

from drc.checks.registry import rule
from drc.checks.ruledoc import RuleDoc

DOC = RuleDoc(
    id="pack-demo-stage", title="notes every stage (a rule pack demonstration)", severity="note",
    what="Notes every stage it is given.", why="Shows that an outside pack loads.",
    how="Nothing is computed.", fix="Nothing to fix.",
    failing_example="", passing_example="")


@rule(DOC, kind="stage")
def check(result, ctx):
    yield ctx.stage_finding(result, measured=None, limit=None,
                            message="the demonstration pack saw this stage", fix="")
'''

BROKEN_RULE = '''"""A broken pack: its rule has a severity drc does not know."""

from drc.checks.registry import rule
from drc.checks.ruledoc import RuleDoc

DOC = RuleDoc(id="pack-broken", title="t", severity="fatal", what="w", why="w", how="h", fix="f",
              failing_example="", passing_example="")


@rule(DOC)
def check(result, ctx):
    return ()
'''


def _pack(folder: Path, name: str, entry: str, module: str, source: str) -> Path:
    root = folder / name
    (root / module).mkdir(parents=True)
    (root / "pyproject.toml").write_text(PYPROJECT.format(name=name, entry=entry, module=module))
    (root / module / "__init__.py").write_text(source)
    return root


def _install(python: Path, pack: Path) -> None:
    done = subprocess.run([str(python), "-m", "pip", "install", "--no-deps", "--no-build-isolation", "-q",
                           str(pack)], capture_output=True, text=True, timeout=300)
    assert done.returncode == 0, done.stdout[-2000:] + done.stderr[-2000:]


def test_a_rule_pack_installed_with_pip_is_loaded(tmp_path: Path):
    env_dir = tmp_path / "venv"
    venv.EnvBuilder(system_site_packages=True, with_pip=False).create(env_dir)
    python = env_dir / "bin" / "python"
    _install(python, _pack(tmp_path, "drc-pack-demo", "demo", "drc_pack_demo", GOOD_RULE))
    work = tmp_path / "work"
    work.mkdir()
    shutil.copy(ROOT / "boards" / "lx24" / "remote_pod.cir", work / "board.cir")
    env = dict(os.environ, PYTHONPATH=str(ROOT), COLUMNS="100", NO_COLOR="1")

    def drc(*args: str) -> subprocess.CompletedProcess:
        return subprocess.run([str(python), "-m", "drc.cli", *args], cwd=work, env=env,
                              capture_output=True, text=True, timeout=300)

    listed = drc("rules")
    assert listed.returncode == 0, listed.stderr
    assert "pack-demo-stage" in listed.stdout and "undebounced-input" in listed.stdout
    explained = drc("handbook", "pack-demo-stage")
    assert explained.returncode == 0 and "notes every stage" in explained.stdout
    checked = drc("check", "board.cir", "--format", "json", "--no-fixes")
    assert checked.returncode == 0, checked.stderr  # notes do not fail the run
    report = json.loads(checked.stdout)
    fired = [f for f in report["boards"][0]["findings"] if f["rule"] == "pack-demo-stage"]
    assert len(fired) == 4 and all(f["severity"] == "note" for f in fired)  # one per stage

    # A broken pack: one located message and exit status 2, for any command that reads the rules.
    broken = _pack(tmp_path, "drc-pack-broken", "broken", "drc_pack_broken", BROKEN_RULE)
    _install(python, broken)
    for args in (("rules",), ("check", "board.cir")):
        failed = drc(*args)
        assert failed.returncode == 2, failed.stdout + failed.stderr
        assert "Traceback" not in failed.stderr
        assert "rule pack 'broken' of drc-pack-broken" in failed.stderr
        assert "severity must be one of" in failed.stderr
        assert "drc_pack_broken/__init__.py:10" in failed.stderr  # the line that registers the rule
        assert failed.stdout == ""

