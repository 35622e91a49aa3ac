"""Shared helpers for the reader tests: ngspice inventories and small writers."""

from __future__ import annotations

import os
import re
import shutil
import subprocess
from pathlib import Path

import pytest

from tests.support.ngspice import require_ngspice

CORPUS = Path(__file__).resolve().parent / "corpus"

_LISTING = re.compile(r"^\s*\d+\s*:\s*(\S+)(.*)$")
_EQUATIONS = re.compile(r"Circuit Equations\s*=\s*(\d+)")


def ngspice_inventory(deck_path: Path, with_listing: bool = False):
    """(flattened element names, node count) as ngspice-39 reports them (and,
    `with_listing`, its `listing expand` text as a second item).

    Recipe from shared/reference/spice-dialect.md: `listing expand` prints the
    flattened element lines; before any analysis `Circuit Equations` is the
    number of distinct nodes including ground. The deck (and the files it
    includes) are copied to a scratch folder, the control block appended there.
    """
    exe = require_ngspice()
    scratch = Path(os.environ.get("TMPDIR", "/tmp")) / f"drc-ng-{os.getpid()}-{id(deck_path)}"
    if scratch.exists():
        shutil.rmtree(scratch)
    shutil.copytree(deck_path.parent, scratch)
    deck = scratch / deck_path.name
    text = deck.read_text(encoding="utf-8", errors="replace").rstrip()
    lines = text.split("\n")
    if lines[-1].strip().lower() == ".end":
        lines = lines[:-1]
    lines += [".control", "listing expand", "rusage equations", "quit", ".endc", ".end"]
    deck.write_text("\n".join(lines) + "\n", encoding="utf-8")
    try:
        proc = subprocess.run([exe, "-n", "-b", str(deck)], capture_output=True, text=True,
                              timeout=60, cwd=scratch, env=dict(os.environ, HOME=str(scratch)))
    finally:
        shutil.rmtree(scratch, ignore_errors=True)
    out = proc.stdout + proc.stderr
    assert proc.returncode == 0, f"ngspice failed on {deck_path}:\n{out[-3000:]}"
    names: set[str] = set()
    first = True
    for line in proc.stdout.splitlines():
        match = _LISTING.match(line)
        if not match:
            continue
        if first:  # the title line
            first = False
            continue
        name = match.group(1)
        if name.startswith("."):
            continue
        names.add(_normalise(name.lower()))
    equations = _EQUATIONS.search(out)
    assert equations, out[-2000:]
    if with_listing:
        return (names, int(equations.group(1))), proc.stdout.lower()
    return names, int(equations.group(1))


def _normalise(name: str) -> str:
    """ngspice repeats the element letter for subcircuits defined inside
    subcircuits (`r.x1.r.xs.rs`, observed with ngspice-39); path segments are
    X names, so a bare letter segment is that repetition and is dropped."""
    parts = name.split(".")
    if len(parts) <= 2:
        return name
    kind = parts[0]
    return ".".join([kind] + [p for p in parts[1:-1] if p != kind] + [parts[-1]])


def ngspice_name(designator: str, kind: str) -> str:
    """ngspice's flattened name for one of our designators: `X1/XA/R3` -> `r.x1.xa.r3`."""
    parts = designator.lower().split("/")
    if len(parts) == 1:
        return parts[0]
    return kind.lower() + "." + ".".join(parts)


def our_inventory(netlist) -> tuple[set[str], int]:
    names = {ngspice_name(e.designator, e.kind) for e in netlist.elements}
    return names, len(netlist.nets() | {"0"})


@pytest.fixture
def write(tmp_path):
    """write(name, text) -> Path inside tmp_path."""
    def _write(name: str, text: str, encoding: str = "utf-8") -> Path:
        path = tmp_path / name
        path.parent.mkdir(parents=True, exist_ok=True)
        path.write_text(text, encoding=encoding)
        return path
    return _write
