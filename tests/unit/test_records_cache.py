"""RecordsCache: a value is returned only to a request that read the generation it was
built at (service/store/records_cache.py, points 2 and 3)."""
from __future__ import annotations

from service.store.records_cache import RecordsCache


class Builder:
    def __init__(self) -> None:
        self.calls = 0

    def __call__(self) -> list[int]:
        self.calls += 1
        return [self.calls]


def test_a_value_is_reused_within_its_generation_and_rebuilt_after_it():
    cache, build = RecordsCache(), Builder()
    first = cache.get_or_build(7, "head A", build)
    assert cache.get_or_build(7, "head A", build) is first
    assert cache.get_or_build(7, "head B", build) is not first  # another key builds its own
    assert cache.get_or_build(8, "head A", build) is not first  # a plug changed
    assert build.calls == 3 and len(cache) == 1  # generation 7's values are gone


def test_without_a_generation_nothing_is_reused():
    cache, build = RecordsCache(), Builder()
    cache.get_or_build(None, "head A", build)
    cache.get_or_build(None, "head A", build)
    assert build.calls == 2 and len(cache) == 0


def test_a_value_built_for_a_generation_overtaken_meanwhile_is_not_returned_for_the_new_one():
    cache, build = RecordsCache(), Builder()

    def slow_build():  # another request sees generation 9 while this one builds for 8
        cache.get_or_build(9, "head B", Builder())
        return build()

    cache.get_or_build(8, "head A", slow_build)
    assert cache.get_or_build(9, "head A", build) == [2]  # rebuilt, not the generation-8 value
    assert build.calls == 2


def test_the_least_recently_used_value_leaves_first():
    cache, build = RecordsCache(capacity=2), Builder()
    a = cache.get_or_build(1, "a", build)
    cache.get_or_build(1, "b", build)
    assert cache.get_or_build(1, "a", build) is a  # a used again: b is now the oldest
    cache.get_or_build(1, "c", build)
    assert cache.get_or_build(1, "a", build) is a
    assert build.calls == 3
    cache.get_or_build(1, "b", build)
    assert build.calls == 4
