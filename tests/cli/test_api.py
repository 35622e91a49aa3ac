"""The Python API: one board, and an audit over any concurrent.futures Executor.

The audit must give the same report in this process, in a process pool and
on a dask.distributed local cluster (its executor is a standard Executor).
"""

from __future__ import annotations

from concurrent.futures import ProcessPoolExecutor

import pytest

import drc
from drc.report.json_report import render_json
from tests.cli.helpers import ROOT

BOARDS = ROOT / "boards" / "lx24"
OPTIONS = drc.CheckOptions(propose_fixes=False)


def test_check_one_board():
    outcome = drc.check_board(BOARDS / "remote_pod.cir", OPTIONS)
    report = outcome.report
    assert report.error is None and report.contacts == 4
    assert {r.stage.kind for r in report.stages} == {"rc-schmitt"}


def test_the_api_leaves_the_collector_alone(monkeypatch):
    import gc

    def refuse():
        raise AssertionError("the Python API must not pause the host's garbage collector")

    monkeypatch.setattr(gc, "disable", refuse)
    assert drc.check_board(BOARDS / "remote_pod.cir", OPTIONS).report.error is None
    assert len(drc.audit([BOARDS / "remote_pod.cir"], OPTIONS).boards) == 1


def test_audit_same_result_with_a_process_pool():
    serial = render_json(drc.audit([BOARDS], OPTIONS))
    with ProcessPoolExecutor(max_workers=2) as pool:
        pooled = render_json(drc.audit([BOARDS], OPTIONS, executor=pool))
    assert pooled == serial


@pytest.mark.slow
def test_audit_same_result_on_a_dask_cluster():
    distributed = pytest.importorskip("dask.distributed")
    serial = render_json(drc.audit([BOARDS], OPTIONS))
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True,
                                  dashboard_address=None) as cluster, \
            distributed.Client(cluster) as client:
        clustered = render_json(drc.audit([BOARDS], OPTIONS, executor=client.get_executor()))
    assert clustered == serial
