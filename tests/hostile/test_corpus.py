"""Hostile inputs through the real console entry point: no traceback, no hang,
nothing escapes, nothing is lost.

Two sources of cases: the small committed files under corpus/ (described by
corpus/manifest.toml) and the large or special ones make_corpus.py generates
into a scratch folder (deep and exploding hierarchies, a 100 MB line, a
million continuation lines, include bombs, FIFOs, symbolic links, paths
leaving the board's folder). Every case runs the installed `drc` console
script (runner.ENTRY) in a subprocess with a timeout, from its own scratch folder. The subprocesses run
a few at a time in a session fixture (the suite stays fast on two cores);
each case is then judged in its own test, so a failure names its case.
"""

from __future__ import annotations

import shutil
import tomllib
from concurrent.futures import ThreadPoolExecutor
from pathlib import Path

import pytest

from tests.hostile import make_corpus
from tests.hostile.runner import Outcome, problems, run

CORPUS = Path(__file__).resolve().parent / "corpus"
MANIFEST = tomllib.loads((CORPUS / "manifest.toml").read_text(encoding="utf-8"))


def _committed() -> list[make_corpus.Case]:
    out = []
    for name, spec in MANIFEST.items():
        folder = CORPUS / name
        args = ["check", "b.cir"] + (["--baseline", "base.json"]
                                     if (folder / "base.json").exists() else [])
        status = spec["status"]
        out.append(make_corpus.Case(
            name, spec.get("args", args), tuple(status) if isinstance(status, list) else status,
            spec.get("message", ""), spec.get("located"),
            inputs=sorted(p.name for p in folder.iterdir()), xfail=spec.get("xfail")))
    return out


COMMITTED = _committed()
GENERATED = make_corpus.cases(big=True)
ALL = {c.name: c for c in COMMITTED} | {c.name: c for c, _ in GENERATED}


@pytest.fixture(scope="session")
def outcomes(tmp_path_factory) -> dict[str, Outcome | None]:
    root = tmp_path_factory.mktemp("hostile")
    jobs = []
    for case in COMMITTED:
        where = root / case.name
        shutil.copytree(CORPUS / case.name, where)
        jobs.append((case, where))
    for case, files in GENERATED:
        jobs.append((case, make_corpus.materialise(case, files, root)))

    def one(job):
        case, where = job
        if case.skip is not None and case.skip():
            return case.name, None
        outcome = run(case.args, where / case.workdir, case.inputs, case.timeout, env=case.env,
                      stdout=case.stdout, setup=case.setup,
                      prefix=case.prefix() if case.prefix else ())
        if (where / "PWNED").exists() or (Path.cwd() / "PWNED").exists():
            outcome.changed.append("PWNED (an expression or config value was executed)")
        if case.check is not None:
            outcome.further.extend(case.check(where, outcome))
        return case.name, outcome

    with ThreadPoolExecutor(max_workers=3) as pool:
        return dict(pool.map(one, jobs))


def _param(case: make_corpus.Case):
    marks = [pytest.mark.xfail(reason=case.xfail, strict=False)] if case.xfail else []
    return pytest.param(case.name, marks=marks, id=case.name)


@pytest.mark.parametrize("name", [_param(c) for c in ALL.values()])
def test_hostile_case(outcomes, name):
    case = ALL[name]
    if outcomes[name] is None:
        pytest.skip(case.skip())
    wrong = problems(outcomes[name], case.status, case.message, case.located, case.located_file)
    assert not wrong, f"{name}: " + "; ".join(wrong)


def test_manifest_lists_every_corpus_folder():
    folders = {p.name for p in CORPUS.iterdir() if p.is_dir()}
    assert folders == set(MANIFEST), folders ^ set(MANIFEST)
