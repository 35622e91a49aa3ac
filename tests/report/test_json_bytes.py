"""The JSON report on standard output is written as orjson's bytes (no text copy of a
large report); they are the very bytes of the JSON text the other outputs write.

Source of truth: the report written with `--output json:FILE` (drc.atomic writes
the text, UTF-8) in the same run, and standard output read as bytes; and the
in-process text (`render_json`) against its bytes (`render_json_utf8`) for a
report holding non-ASCII characters (Ω, µ, a file name in Greek).
"""

from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

from drc.pipeline import audit
from drc.report.json_report import render_json, render_json_utf8

ROOT = Path(__file__).resolve().parents[2]
BOARD = ROOT / "boards" / "lx24" / "front_panel.cir"


def test_standard_output_is_the_file_report_byte_for_byte(tmp_path):
    env = dict(os.environ, PYTHONIOENCODING="utf-8", NO_COLOR="1")
    target = tmp_path / "report.json"
    proc = subprocess.run([sys.executable, "-m", "drc.cli", "check", str(BOARD), "--format", "json",
                           "--no-cache", "--output", f"json:{target}"], cwd=tmp_path, env=env,
                          capture_output=True, timeout=120)
    assert proc.returncode in (0, 1), proc.stderr
    assert proc.stdout == target.read_bytes()
    assert "Ω".encode() in proc.stdout


def test_bytes_and_text_agree(tmp_path):
    board = tmp_path / "πίνακας.cir"
    board.write_text(BOARD.read_text(encoding="utf-8"), encoding="utf-8")
    run = audit([board])
    assert render_json_utf8(run) == render_json(run).encode("utf-8")
