import os
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parent.parent
BOARDS = ROOT / "boards"


@pytest.fixture
def boards_dir() -> Path:
    return BOARDS


@pytest.fixture(autouse=True, scope="session")
def _private_result_cache(tmp_path_factory):
    """Every run of the suite (and every `drc` it starts) keeps its result cache in a
    temporary folder, never in the user's cache folder."""
    folder = tmp_path_factory.mktemp("drc-cache")
    previous = os.environ.get("DRC_CACHE_DIR")
    os.environ["DRC_CACHE_DIR"] = str(folder)
    yield folder
    if previous is None:
        os.environ.pop("DRC_CACHE_DIR", None)
    else:
        os.environ["DRC_CACHE_DIR"] = previous


@pytest.fixture(autouse=True)
def _fresh_memos_under_mutation():
    """Under mutation testing (mutmut sets MUTANT_UNDER_TEST) every test starts with empty
    memos: mutmut forks each mutant's run from a process that ran the unmutated code, and
    a figure remembered from there would hide the mutant (tests/mutation.py)."""
    if os.environ.get("MUTANT_UNDER_TEST"):
        from drc.caching import clear_caches
        clear_caches()
    yield
