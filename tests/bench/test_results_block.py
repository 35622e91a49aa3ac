"""The README's speed section is benchmarks/results.md's: the benchmark script puts
its tables between two marker lines of the README and leaves the rest alone.

Checked on a copy of the real README (never the file itself): the markers are
there once each, in order; after an update the block holds exactly the given
text and everything outside the block is byte for byte what it was.
"""

import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT / "benchmarks"))
import run  # noqa: E402


def test_readme_holds_the_results_block_once():
    text = (ROOT / "README.md").read_text(encoding="utf-8")
    assert text.count(run.BEGIN) == text.count(run.END) == 1
    assert text.index(run.BEGIN) < text.index(run.END)
    assert text.index("## Speed") < text.index(run.BEGIN)


def test_update_replaces_only_the_block(tmp_path, monkeypatch):
    copy = tmp_path / "README.md"
    original = (ROOT / "README.md").read_text(encoding="utf-8")
    copy.write_text(original, encoding="utf-8")
    monkeypatch.setattr(run, "README", copy)
    body = "| goal | ratio |\n|---|---|\n| a | 1.00 |"
    run.update_readme(body)
    new = copy.read_text(encoding="utf-8")
    before, _, rest = original.partition(run.BEGIN)
    _, _, after = rest.partition(run.END)
    assert new == before + run.BEGIN + "\n" + body + "\n" + run.END + after


def test_sizes_are_named_as_the_goals_name_them():
    assert [run._k(n) for n in (1_000_000, 100_000, 10_000, 2_500)] == ["1M", "100k", "10k", "2,500"]
