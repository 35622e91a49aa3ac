"""Run the real console script in a subprocess, as a CI job would."""

from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]


def console_script() -> list[str]:
    """The installed `drc` console script beside this interpreter (what users run), else
    the same entry point through `python -m drc.cli`."""
    script = Path(sys.executable).parent / ("drc.exe" if os.name == "nt" else "drc")
    return [str(script)] if script.is_file() else [sys.executable, "-m", "drc.cli"]


def drc_script(*args: str, cwd: Path | None = None, timeout: float = 120, together: bool = False,
               **env: str) -> subprocess.CompletedProcess:
    """Run the console script as a pipe or a CI log sees it (no terminal, no width);
    together: standard error into the same pipe as standard output (2>&1)."""
    environment = dict(os.environ, NO_COLOR="1", **env)
    environment.pop("COLUMNS", None)
    return subprocess.run([*console_script(), *args], cwd=cwd or ROOT, env=environment,
                          stdout=subprocess.PIPE, stderr=subprocess.STDOUT if together else subprocess.PIPE,
                          text=True, timeout=timeout, encoding=env.get("PYTHONIOENCODING", "utf-8"),
                          errors="replace")


def drc(*args: str, cwd: Path | None = None, timeout: float = 120) -> subprocess.CompletedProcess:
    env = dict(os.environ, COLUMNS="100", NO_COLOR="1")
    return subprocess.run([sys.executable, "-m", "drc.cli", *args], cwd=cwd or ROOT, env=env,
                          capture_output=True, text=True, timeout=timeout)


# A clean stage: values proposed by `drc design --rail 5V --family HC --contact tactile --resistor 10k`.
CLEAN = """clean key board
V1 vcc 0 DC 5
R1 vcc n1 10k
R2 n1 in 22k
C1 in 0 1.2u
SW1 n1 0 TACTILE
XU1 in out 0 0 0 0 0 0 0 0 0 0 0 vcc 74HC14
.end
"""

# The same stage with a pull-up that wastes current (a warning) and nothing else.
WARNING_ONLY = """warning-only board
V1 vcc 0 DC 5
R1 vcc n1 3.3k
R2 n1 in 22k
C1 in 0 1.5u
SW1 n1 0 TACTILE
XU1 in out 0 0 0 0 0 0 0 0 0 0 0 vcc 74HC14
.end
"""

# A toggle straight into a flip-flop clock with only a pull-up: an error.
ERROR = """error board
V1 vcc 0 DC 5
R1 vcc clk 10k
SW1 clk 0 TOGGLE
XU1 vcc d clk vcc q d 0 0 0 vcc 0 0 vcc vcc 74HC74
.end
"""
