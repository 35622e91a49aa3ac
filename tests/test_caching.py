"""The one cache helper: bounded memos and memoized functions, cleared together."""

from drc.caching import Memo, clear_caches, memoized


def test_memo_forgets_everything_when_full_and_keeps_the_newest():
    memo: Memo[int, str] = Memo("test", limit=3)
    for key in range(3):
        memo.put(key, str(key))
    assert len(memo) == 3 and memo.get(2) == "2"
    memo.put(99, "x")  # over the bound: cleared, then stored
    assert len(memo) == 1 and memo.get(0) is None and memo.get(99) == "x"


def test_clear_caches_empties_memos_and_memoized_functions():
    calls = []

    @memoized(limit=8)
    def square(x: int) -> int:
        calls.append(x)
        return x * x

    memo: Memo[str, int] = Memo("test", limit=8)
    memo.put("a", 1)
    assert square(3) == 9 and square(3) == 9 and calls == [3]
    clear_caches()
    assert memo.get("a") is None
    assert square(3) == 9 and calls == [3, 3]
