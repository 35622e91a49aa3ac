"""Netlists written the way exports write them: each fixture states its stages and findings.

Each file under exports/ (our own LX-24 scenario) says in comment lines what
it must give:

    * expect-stage: CONTACT -> RECEIVER KIND     one per stage, exactly
    * expect: RULE CONTACT RECEIVER [REASON]     one per finding (RECEIVER "-": none)
    * expect: none                               no finding at all
    * expect-load: CONTACT TITLE DESIGNATOR      a non-logic load the contact drives
    * config: FILE                               the config the board is checked with

The stages and findings follow from the circuits by construction: a checked
stage is the rules' reference stage (8.2k pull-up, 39k / 1u into a Schmitt
input, both edges 12-80 ms between corners: drc/checks/examples.py) unless
the file says otherwise, with its figures (handbook formulas) in its
comments; an unchecked input is the part the file puts there. The test
prints missing and unexpected items.
"""

from __future__ import annotations

from collections import Counter
from pathlib import Path

import pytest

from drc.board.coverage import ContactStatus
from drc.pipeline import CheckOptions, check_board_in_memory

EXPORTS = Path(__file__).parent / "exports"
FILES = sorted(EXPORTS.glob("*.cir")) + sorted((EXPORTS / "failclosed").glob("*.cir"))


def expectations(path: Path) -> dict:
    out: dict = {"stages": Counter(), "findings": Counter(), "loads": Counter(), "config": None,
                 "none": False}
    for line in path.read_text().splitlines():
        text = line.strip()
        if not text.startswith("*"):
            continue
        head, _, rest = text[1:].strip().partition(":")
        words = rest.split()
        if head == "expect-stage":
            contact, _arrow, receiver, kind = words
            out["stages"][(contact, receiver, kind)] += 1
        elif head == "expect" and words == ["none"]:
            out["none"] = True
        elif head == "expect":
            out["findings"][tuple(words)] += 1
        elif head == "expect-load":
            out["loads"][(words[0], " ".join(words[1:-1]), words[-1])] += 1
        elif head == "config":
            out["config"] = str(path.parent / words[0])
    return out


def _finding_key(f) -> tuple:
    words = (f.rule, f.contact, f.receiver or "-")
    return words + (f.reason,) if f.reason else words


def _difference(want: Counter, got: Counter) -> str:
    missing, unexpected = want - got, got - want
    return "" if not missing and not unexpected else \
        f"missing: {sorted(missing)}\nunexpected: {sorted(unexpected)}"


@pytest.mark.parametrize("path", FILES, ids=lambda p: p.name)
def test_export_fixture(path: Path):
    want = expectations(path)
    assert want["stages"] or want["findings"] or want["none"], f"{path.name} states nothing"
    assert not (want["none"] and want["findings"]), path.name
    check = check_board_in_memory(path, CheckOptions(config_path=want["config"], propose_fixes=False))
    stages = Counter((r.stage.contact.designator, r.stage.receiver.ref, str(r.stage.kind))
                     for r in check.results)
    findings = Counter(_finding_key(f) for f in check.findings)
    assert check.survey is not None
    loads: Counter = Counter()
    for outcome in check.survey.outcomes:
        for load in outcome.loads:
            title, _, designator = load.rpartition(" ")
            loads[(outcome.contact, title, designator)] += 1
    detail = "\n".join(f"  {f.rule} {f.contact} {f.receiver} {f.reason}: {f.message}" for f in check.findings)
    for what, wanted, got in (("stages", want["stages"], stages), ("findings", want["findings"], findings),
                              ("loads", want["loads"], loads)):
        problem = _difference(wanted, got)
        assert not problem, f"{path.name}: {what}\n{problem}\nfindings:\n{detail}"


@pytest.mark.parametrize("path", FILES, ids=lambda p: p.name)
def test_every_contact_ends_one_way(path: Path):
    """Fail closed: each contact is checked, drives only non-logic loads, or has an
    unchecked-input finding; never none of these."""
    want = expectations(path)
    check = check_board_in_memory(path, CheckOptions(config_path=want["config"], propose_fixes=False))
    assert check.survey is not None
    flagged = {f.contact for f in check.findings if f.rule == "unchecked-input"}
    staged = {r.stage.contact.designator for r in check.results}
    for outcome in check.survey.outcomes:
        if outcome.status == ContactStatus.NOT_CHECKED:
            assert outcome.contact in flagged, outcome
        elif outcome.status == ContactStatus.CHECKED:
            assert outcome.contact in staged and outcome.contact not in flagged, outcome
        else:
            assert outcome.loads and outcome.contact not in staged | flagged, outcome
    assert {o.contact for o in check.survey.outcomes} == {c.designator for c in check.board.contacts}
