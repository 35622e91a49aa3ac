"""The command line's process, in-process: what `drc.cli.parser.main` changes for a
run (standard output, signal handlers, environment, warnings) is put back after it,
and a floating-point warning reaches the user as one plain line.

The hostile environments themselves (standard output closed or full, encodings,
COLUMNS=0, NO_COLOR, a deleted working folder) run through the console entry
point in tests/hostile/process_cases.py.
"""

from __future__ import annotations

import os
import signal
import sys

import numpy as np

import drc.cli.commands as commands
from drc.cli.parser import main


def test_main_puts_the_process_back(monkeypatch, capsys):
    monkeypatch.setenv("COLUMNS", "0")
    monkeypatch.setenv("NO_COLOR", "1")
    monkeypatch.setenv("FORCE_COLOR", "1")
    before = (sys.stdout, signal.getsignal(signal.SIGTERM), signal.getsignal(signal.SIGHUP),
              dict(os.environ))
    seen = {}

    def look(args):
        seen["columns"] = os.environ.get("COLUMNS")
        seen["force"] = os.environ.get("FORCE_COLOR")
        seen["term"] = signal.getsignal(signal.SIGTERM)
        print("done")
        return 0

    monkeypatch.setattr(commands, "run_rules", look)
    assert main(["rules"]) == 0
    assert capsys.readouterr().out == "done\n"
    assert seen["columns"] is None and seen["force"] is None   # ignored for the run
    assert seen["term"] not in (signal.SIG_DFL, before[1])      # ours during the run
    after = (sys.stdout, signal.getsignal(signal.SIGTERM), signal.getsignal(signal.SIGHUP),
             dict(os.environ))
    assert after == before


def test_a_floating_point_warning_is_one_plain_line(monkeypatch, capsys):
    def overflow(args):
        np.array([1e308]) * np.array([10.0])
        return 0

    monkeypatch.setattr(commands, "run_rules", overflow)
    assert main(["rules"]) == 0
    err = capsys.readouterr().err
    assert err.splitlines() == ["drc: warning: a numerical problem in the analysis (overflow "
                                "encountered in multiply); check the values of the parts involved"]
