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
