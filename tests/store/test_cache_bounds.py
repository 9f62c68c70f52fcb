"""Every in-memory cache of the service is bounded in bytes, and a byte-bounded cache keeps
the total weight of what it holds within its bound (checked against numpy's own ``nbytes``
of the arrays put in; common practice, no source)."""

from __future__ import annotations

import gc

import numpy as np

from polarsvc import pipeline
from polarsvc.api import responses
from polarsvc.lru import LruCache
from polarsvc.store import paging
from polarsvc.store import polars as polar_store


def test_every_service_cache_has_a_byte_bound():
    caches = {
        "ENCODED": responses.ENCODED,
        "RECENT_TABLES": pipeline.RECENT_TABLES,
        "PREPARED_FAMILIES": pipeline.PREPARED_FAMILIES,
        "RESOLUTIONS": pipeline.RESOLUTIONS,
        "BLADE_INPUTS": pipeline.BLADE_INPUTS,
        "COUNTS": paging.COUNTS,
        "REVISION_TABLES": polar_store.REVISION_TABLES,
    }
    for name, cache in caches.items():
        assert cache.max_size is not None and cache.max_size > 0, name
    # nothing else in these modules is an LruCache without a byte bound
    for module in (pipeline, responses, paging, polar_store):
        for value in vars(module).values():
            if isinstance(value, LruCache):
                assert value.max_size is not None, module.__name__
    total = sum(cache.max_size for cache in caches.values())
    assert total <= 400 * 2**20  # leaves room under a 600 MB process for the rest


def test_byte_bound_holds_whatever_is_put_in():
    cache: LruCache[np.ndarray] = LruCache(
        max_entries=1000, max_size=10 * 2**20, size_of=lambda a: a.nbytes
    )
    rng = np.random.default_rng(3)
    for index in range(200):
        cache.put(index, np.zeros(int(rng.integers(1, 400_000)), dtype=np.float64))
        held = [value for value, _ in cache._items.values()]
        assert sum(a.nbytes for a in held) <= 10 * 2**20
    assert cache.peek(199) is not None  # the newest stays
    cache.put("too big", np.zeros(2 * 2**20))  # 16 MB: above the bound, never kept
    assert cache.peek("too big") is None
    gc.collect()


def test_served_table_weight_counts_arrays_and_reports():
    alpha = np.linspace(-180.0, 180.0, 721)
    columns = {k: np.zeros((200, 721)) for k in ("cl", "cd", "cm")}
    served = pipeline.ServedTable(
        kind="blade-set", recipe={}, recipe_hash="r", content_hash="c", alpha_deg=alpha,
        columns=columns, reports={"stations": [{}] * 200}, inputs=(),
    )
    # 3 x 200 x 721 float64 plus the angles, by hand: 3,460,800 + 5,768 bytes
    arrays = 3 * 200 * 721 * 8 + 721 * 8
    assert pipeline._served_size(served) == arrays + 200 * pipeline.REPORT_BYTES_PER_STATION
