"""Run the independent simulator ngspice (Debian package `ngspice`) in batch mode.

Used only by tests, as an oracle. In CI (CI=true) a missing ngspice is a
failure, elsewhere the oracle tests are skipped with a clear message.
"""

from __future__ import annotations

import os
import re
import shutil
import subprocess
import tempfile
from pathlib import Path

import pytest

_NUMBER = r"[-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?"
_MEAS = re.compile(rf"^\s*(\w+)\s*=\s*({_NUMBER})", re.MULTILINE)


def require_ngspice() -> str:
    path = shutil.which("ngspice")
    if path is None:
        if os.environ.get("CI"):
            pytest.fail("ngspice is not installed; .ci/run must apt-get install it")
        pytest.skip("ngspice not installed (apt-get install -y ngspice)")
    return path


def run_deck(deck: str, timeout: float = 60.0) -> subprocess.CompletedProcess:
    """Run a deck with `ngspice -n -b`, HOME pointed at an empty folder."""
    exe = require_ngspice()
    with tempfile.TemporaryDirectory() as tmp:
        deck_path = Path(tmp) / "deck.cir"
        deck_path.write_text(deck, encoding="utf-8")
        env = dict(os.environ, HOME=tmp)
        return subprocess.run([exe, "-n", "-b", str(deck_path)], capture_output=True,
                              text=True, timeout=timeout, cwd=tmp, env=env)


def measurements(output: str) -> dict[str, float]:
    """`name = value` lines printed by .meas statements, lower-case names."""
    return {m.group(1).lower(): float(m.group(2)) for m in _MEAS.finditer(output)}


def measure(deck: str, names: list[str]) -> dict[str, float]:
    """Run a deck and return the named .meas results; fail if any is missing."""
    proc = run_deck(deck)
    found = measurements(proc.stdout + "\n" + proc.stderr)
    missing = [n for n in names if n.lower() not in found]
    if missing:
        raise AssertionError(f"ngspice printed no value for {missing}:\n{proc.stdout[-3000:]}\n"
                             f"{proc.stderr[-2000:]}\n--- deck ---\n{deck}")
    return {n: found[n.lower()] for n in names}
