"""A fixture corpus: small netlists with their expected findings as comments.

Each file under corpus/ states, in `* expect:` lines, every finding it must
produce as `RULE CONTACT RECEIVER` (stage rules) or `RULE PART` (part-level
rules); `* expect: none` says the file must be clean. The test runs the
whole pipeline on each file and prints missing and unexpected findings.
The circuits are ours; which rule must fire follows from the figures
written beside each stage (and the rule documentation).
"""

from __future__ import annotations

from collections import Counter
from pathlib import Path

import pytest

from drc.pipeline import check_netlist_text

CORPUS = Path(__file__).parent / "corpus"


def expectations(text: str) -> Counter:
    out: Counter = Counter()
    for line in text.splitlines():
        line = line.strip()
        if line.lower().startswith("* expect:"):
            words = line.split(":", 1)[1].split()
            if words != ["none"]:
                out[tuple(words)] += 1
    return out


def produced(findings) -> Counter:
    out: Counter = Counter()
    for f in findings:
        if f.contact is not None:
            out[(f.rule, f.contact, f.receiver)] += 1
        else:
            out[(f.rule, *f.parts)] += 1
    return out


@pytest.mark.parametrize("path", sorted(CORPUS.glob("*.cir")), ids=lambda p: p.name)
def test_corpus_file(path: Path):
    text = path.read_text()
    want = expectations(text)
    assert want or "* expect: none" in text, f"{path.name} states no expectation"
    _board, _results, findings = check_netlist_text(text, str(path))
    got = produced(findings)
    missing, unexpected = want - got, got - want
    detail = "\n".join(f"  {f.rule} {f.contact} {f.receiver} {f.parts}: {f.message}" for f in findings)
    assert not missing and not unexpected, (
        f"{path.name}\nmissing: {sorted(missing)}\nunexpected: {sorted(unexpected)}\nfindings:\n{detail}")
