"""Run one hostile case through the real console entry point and judge it.

The command is the installed `drc` console script (the file pip writes beside
the interpreter; `python -m drc.cli` where there is none) with ARGS, in a
subprocess with a timeout, run from the case's folder, with the case's extra environment variables and,
where the case asks, standard output somewhere hostile (closed, a full
device, a pipe nobody reads, a file under a size limit) or a working folder
that is deleted first (tests/hostile/launch.py sets those up, then execs).
Judging: the exit status is one of the expected ones, "Traceback" appears
nowhere, the message holds the expected substring, a location
`FILE:LINE[:COL]:` precedes it where the case says so, and every input file
has the same bytes afterwards (SHA-256 before and after).
"""

from __future__ import annotations

import hashlib
import os
import re
import subprocess
import sys
from dataclasses import dataclass, field
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
    raw_stdout: bytes = b""     # standard output as written (encodings are checked on it)
    further: list[str] = field(default_factory=list)  # what a case's own check found wrong


def digest(path: Path) -> str | None:
    try:
        if not path.is_file():
            return None
        return hashlib.sha256(path.read_bytes()).hexdigest()
    except OSError:
        return None


LAUNCH = Path(__file__).resolve().parent / "launch.py"
# The console script users run; PYTHONPATH (set below) makes it import this checkout.
_SCRIPT = Path(sys.executable).parent / "drc"
ENTRY = [str(_SCRIPT)] if os.name == "posix" and _SCRIPT.is_file() else ["-m", "drc.cli"]


def _stdout_target(stdout: str, cwd: Path):
    """(what subprocess gets as stdout, launcher directives, a file to read it back from)."""
    if stdout == "full":
        return open("/dev/full", "wb"), [], None  # noqa: SIM115 - closed by the caller
    if stdout == "broken":  # a pipe whose reader is gone: every write fails with EPIPE
        read_end, write_end = os.pipe()
        os.close(read_end)
        return write_end, [], None
    if stdout == "closed":
        return subprocess.DEVNULL, ["close-stdout"], None
    if stdout.startswith("fsize:"):
        limit = int(stdout.partition(":")[2])
        out = cwd.parent / f"{cwd.name}.stdout"
        return open(out, "wb"), [f"fsize={limit}"], out  # noqa: SIM115 - closed by the caller
    return subprocess.PIPE, [], None


def run(args: list[str], cwd: Path, inputs: list[str], timeout: float, *,
        env: dict[str, str] | None = None, stdout: str = "pipe", setup: tuple[str, ...] = (),
        prefix: tuple[str, ...] = ()) -> Outcome:
    """Run `drc ARGS` in `cwd`. stdout: "pipe" (captured), "full", "broken", "closed" or
    "fsize:N" (a file under an N-byte size limit, read back as the outcome's stdout);
    setup: further launcher directives (tests/hostile/launch.py); prefix: a command the
    interpreter runs under (e.g. setpriv)."""
    before = {name: digest(cwd / name) for name in inputs}
    # No empty PYTHONPATH entry: it means the working folder, which one case deletes.
    path = os.pathsep.join(p for p in (str(REPO), *os.environ.get("PYTHONPATH", "").split(os.pathsep)) if p)
    environment = dict(os.environ, PYTHONPATH=path, COLUMNS="200", PYTHONIOENCODING="utf-8")
    environment.update(env or {})
    target, directives, read_back = _stdout_target(stdout, cwd)
    directives += list(setup)
    command = [sys.executable, *ENTRY, *args]
    if directives:
        command = [sys.executable, str(LAUNCH), *directives, "--", *ENTRY, *args]
    try:
        proc = subprocess.run([*prefix, *command], cwd=cwd, env=environment, stdout=target,
                              stderr=subprocess.PIPE, timeout=timeout, stdin=subprocess.DEVNULL)
        status, out, err = proc.returncode, proc.stdout or b"", proc.stderr
    except subprocess.TimeoutExpired as exc:
        status, out, err = None, exc.stdout or b"", exc.stderr or b""
    finally:
        if isinstance(target, int) and target >= 0:
            os.close(target)
        elif hasattr(target, "close"):
            target.close()
    if read_back is not None:
        out = read_back.read_bytes()
    after = {name: digest(cwd / name) for name in inputs}
    changed = [n for n in inputs if before[n] != after[n]]
    return Outcome(status, out.decode("utf-8", "replace"), err.decode("utf-8", "replace"), changed,
                   out)


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
    wrong.extend(outcome.further)
    if wrong:
        wrong.append(f"stderr: {outcome.stderr[-800:]!r}; stdout: {outcome.stdout[-400:]!r}")
    return wrong
