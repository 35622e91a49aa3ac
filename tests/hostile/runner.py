"""Run one hostile case through the real console entry point and judge it.

The command is `python -m drc.cli ARGS` in a subprocess with a timeout, run
from the case's folder. Judging: the exit status is one of the expected
ones, "Traceback" appears nowhere, the message holds the expected substring,
a location `FILE:LINE[:COL]:` precedes it where the case says so, and every
input file has the same bytes afterwards (SHA-256 before and after).
"""

from __future__ import annotations

import hashlib
import os
import re
import subprocess
import sys
from dataclasses import dataclass
from pathlib import Path

REPO = Path(__file__).resolve().parents[2]
_LOCATED = {
    "line": re.compile(r"[^\s:]+:\d+(?::\d+)?: "),
    "column": re.compile(r"[^\s:]+:\d+:\d+: "),
}


@dataclass
class Outcome:
    status: int | None          # None: timed out (killed)
    stdout: str
    stderr: str
    changed: list[str]          # inputs whose bytes changed


def digest(path: Path) -> str | None:
    try:
        if not path.is_file():
            return None
        return hashlib.sha256(path.read_bytes()).hexdigest()
    except OSError:
        return None


def run(args: list[str], cwd: Path, inputs: list[str], timeout: float) -> Outcome:
    before = {name: digest(cwd / name) for name in inputs}
    env = dict(os.environ, PYTHONPATH=str(REPO) + os.pathsep + os.environ.get("PYTHONPATH", ""),
               COLUMNS="200", PYTHONIOENCODING="utf-8")
    try:
        proc = subprocess.run([sys.executable, "-m", "drc.cli", *args], cwd=cwd, env=env,
                              capture_output=True, timeout=timeout, stdin=subprocess.DEVNULL)
        status, out, err = proc.returncode, proc.stdout, proc.stderr
    except subprocess.TimeoutExpired as exc:
        status, out, err = None, exc.stdout or b"", exc.stderr or b""
    after = {name: digest(cwd / name) for name in inputs}
    changed = [n for n in inputs if before[n] != after[n]]
    return Outcome(status, out.decode("utf-8", "replace"), err.decode("utf-8", "replace"), changed)


def problems(outcome: Outcome, status, message: str, located: str | None,
             located_file: str | None = None) -> list[str]:
    """What is wrong with `outcome` (empty when the case passes)."""
    wrong: list[str] = []
    expected = status if isinstance(status, (tuple, list)) else (status,)
    text = outcome.stderr + outcome.stdout
    if outcome.status is None:
        wrong.append("timed out (hang or blow-up)")
    elif outcome.status not in expected:
        wrong.append(f"exit status {outcome.status}, expected {expected}")
    if "Traceback" in text:
        wrong.append("a traceback was printed")
    if "internal error" in text:
        wrong.append("an internal error was reported")
    if message and message.casefold() not in text.casefold():
        wrong.append(f"message lacks {message!r}")
    if located:
        lines = [ln for ln in text.splitlines() if message.casefold() in ln.casefold()] or \
            text.splitlines()
        pattern = _LOCATED[located]
        if located_file:
            pattern = re.compile(re.escape(located_file) + pattern.pattern[len(r"[^\s:]+"):])
        if not any(pattern.search(ln) for ln in lines):
            wrong.append(f"message not located ({located}): {lines[:2]!r}")
    if outcome.changed:
        wrong.append(f"input files modified: {outcome.changed}")
    if wrong:
        wrong.append(f"stderr: {outcome.stderr[-800:]!r}; stdout: {outcome.stdout[-400:]!r}")
    return wrong
