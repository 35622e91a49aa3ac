import pytest

from drc.library.catalogue import Library, load_library


@pytest.fixture(scope="session")
def library() -> Library:
    return load_library()
