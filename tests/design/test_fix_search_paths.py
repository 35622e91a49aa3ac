"""The fix search's speed paths change nothing (never a time).

Searches of a board run in lockstep (drc.design.complete.run_lockstep): the
screens of stages of one circuit structure share their solves and every
round's confirmations are one analysis batch. The answers must be those of
each search run alone. The bisection fallback prefetches analyses in batches
(bisection.Evaluator.prefetch): same solution and analysis count as asking
one at a time. And a board's proposed values must not depend on what the
process searched before (the memo shared by a worker's boards) nor on the
order Python happens to iterate a set of rule ids in. The reference is the
one-at-a-time search itself: these are agreement checks between two paths
of drc, as tests/bench/test_benchmark_path.py does for the batched analysis.
"""

import json
import os
import subprocess
import sys
from pathlib import Path

import pytest

from drc.caching import clear_caches
from drc.checks import run_stage_rules
from drc.design import bisection, fixes
from drc.pipeline import CheckOptions, check_board_in_memory, effective_limits

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT / "benchmarks"))
import generate as gen  # noqa: E402


@pytest.fixture(scope="module")
def boards(tmp_path_factory):
    folder = tmp_path_factory.mktemp("fixboards")
    paths = []
    for i in range(4):  # the archive benchmark's demo-sized boards
        path = folder / f"board{i}.cir"
        path.write_text(gen.generate(120, 1000 + i, contacts=6), encoding="utf-8")
        paths.append(path)
    return paths


def _failing(path):
    check = check_board_in_memory(path, CheckOptions(propose_fixes=False))
    limits = effective_limits(check.config)
    out = []
    for result in check.results:
        rules = {f.rule for f in run_stage_rules(result, limits)}
        if rules & set(fixes.FIXABLE) and "slow-edge" not in rules:
            out.append((result, limits, rules - set(fixes.FIXABLE)))
    return out


def test_lockstep_equals_each_search_alone(boards):
    cases = [c for path in boards for c in _failing(path)]
    assert len(cases) >= 4, "the demo boards have failing stages to fix"
    jobs = [fixes._job(r.stage, r.receiver_electrical, lim, "E24", frozenset(tol), r) for r, lim, tol in cases]
    together = fixes._run_jobs(jobs, [100] * len(jobs))
    for job, joint in zip(jobs, together, strict=True):
        alone = fixes._run_jobs([job], [100])[0]
        assert (joint.moves, joint.analyses, joint.screened, joint.complete) == \
            (alone.moves, alone.analyses, alone.screened, alone.complete)
        assert joint.result == alone.result


def test_bisection_prefetch_equals_one_at_a_time(boards, monkeypatch):
    cases = [c for path in boards for c in _failing(path)][:4]
    for result, limits, tolerated in cases:
        job = fixes._job(result.stage, result.receiver_electrical, limits, "E24", frozenset(tolerated), result)
        args = (job.stage, job.rx, limits, job.vars_, set(tolerated), 100)
        batched = bisection.search(*args)
        with monkeypatch.context() as m:
            m.setattr(bisection, "_prefetch_for", lambda *a: None)
            single = bisection.search(*args)
        assert batched[0] == single[0] and batched[2] == single[2]
        assert batched[1] == single[1]


def _fix_texts(path):
    check = check_board_in_memory(path, CheckOptions())
    return [(f.contact, f.receiver, f.rule, f.fix) for f in check.findings]


def test_board_fixes_do_not_depend_on_earlier_boards(boards):
    clear_caches()
    fresh = _fix_texts(boards[-1])
    clear_caches()
    for path in boards[:-1]:
        _fix_texts(path)  # fills the memo a long-lived worker would have
    assert _fix_texts(boards[-1]) == fresh


def test_fix_texts_do_not_depend_on_string_hashing(tmp_path):
    # Sets of rule ids iterate in an order set by the process's string hashing;
    # the searches visit them sorted, so the texts are the same under any seed
    # (on the benchmark's 10k-element board, seeds 1 and 4 once gave different texts).
    board = tmp_path / "board10k.cir"
    board.write_text(gen.generate(10_000, 1, ngspice_safe=True), encoding="utf-8")
    outputs = set()
    for seed in ("1", "4"):
        env = dict(os.environ, PYTHONHASHSEED=seed)
        proc = subprocess.run([sys.executable, "-m", "drc.cli", "check", str(board), "--format",
                               "json", "--report-only"], capture_output=True, text=True, env=env,
                              cwd=str(ROOT))
        assert proc.returncode == 0, proc.stderr
        doc = json.loads(proc.stdout)
        outputs.add(tuple(f["fix"] for b in doc["boards"] for f in b["findings"]))
    assert len(outputs) == 1


def test_the_generated_and_demo_boards_are_searched_completely(boards):
    # Single-capacitor stages get the complete search: the screen must agree with the
    # full analysis on their present values (else a search silently falls back).
    from drc.design import complete
    stages = [c for path in boards for c in _failing(path)]
    stages += [c for path in sorted((ROOT / "boards").rglob("*.cir")) for c in _failing(path)]
    jobs = [fixes._job(r.stage, r.receiver_electrical, lim, "E24", frozenset(tol), r) for r, lim, tol in stages]
    searches = []
    for job in jobs:
        screen = fixes.Screen.build(job.stage, job.rx, job.limits, job.tolerated)
        if screen is not None:
            searches.append(complete.CompleteSearch(job.stage, job.rx, job.limits, job.tolerated, screen,
                                                    list(job.vars_), job.present, job.fired))
    assert len(searches) >= 10
    complete.run_lockstep(searches)
    untrusted = [s.stage.name for s in searches if not s.trusted]
    assert not untrusted, untrusted
