"""Scheduling, progress and refusals of the symmetry tier (parallel paths give identical blocks)."""

from __future__ import annotations

import sys

import numpy as np
import pytest
from test_symmetry_support import one_blas_thread, random_weighted_graph  # noqa: F401

from powerspec.errors import InputError
from powerspec.tiers.symmetry import PowerOperand, SymmetryError, blocks, parallel, plan


def _ops():
    a = random_weighted_graph(np.random.default_rng(5), 3)
    return [PowerOperand(a, a.sum(axis=1), 5)]


def _by_shape(blks):
    return {b.shape: b for b in blks}


def test_process_pool_gives_the_same_blocks(monkeypatch):
    # blocks are deterministic functions of their inputs: a 2-process pool reproduces them bit for bit
    monkeypatch.setattr(parallel, "POOL_MIN_WORK", 0)  # use the pool even for this small product
    serial = _by_shape(blocks(_ops(), 0, 1, "laplacian"))
    seen = []
    pooled = _by_shape(blocks(_ops(), 0, 1, "laplacian", workers=2,
                              progress=lambda done, total: seen.append((done, total))))
    assert serial.keys() == pooled.keys()
    for shape, blk in serial.items():
        assert np.array_equal(blk.values, pooled[shape].values)
        assert np.array_equal(blk.radius, pooled[shape].radius)
        assert blk.multiplicity == pooled[shape].multiplicity
    total = plan(_ops(), 0, 1, "laplacian").blocks
    assert seen == [(i, total) for i in range(1, total + 1)]


def test_dask_local_cluster():
    distributed = pytest.importorskip("distributed")
    serial = _by_shape(blocks(_ops(), 1, 1, "normalized"))
    with distributed.LocalCluster(n_workers=1, processes=False, dashboard_address=None) as cluster:
        remote = _by_shape(blocks(_ops(), 1, 1, "normalized", scheduler=cluster.scheduler_address))
    assert serial.keys() == remote.keys()
    for shape, blk in serial.items():
        assert np.array_equal(blk.values, remote[shape].values)


def test_missing_dask_is_a_clear_error(monkeypatch):
    monkeypatch.setitem(sys.modules, "distributed", None)  # import now raises ImportError
    with pytest.raises(SymmetryError, match="cluster"):
        list(blocks(_ops(), 0, 1, "laplacian", scheduler="tcp://127.0.0.1:1"))


@pytest.mark.parametrize("adj,deg,a,b,kind,match", [
    (np.array([[0.0, 1.0], [2.0, 0.0]]), np.ones(2), 0, 1, "laplacian", "not symmetric"),
    (np.array([[0.0, 1.0], [1.0, 0.0]]), np.ones(2), 0.5, 1, "laplacian", "non-associative"),
    (np.array([[0.0, 1.0, 0.0], [1.0, 0.0, 0.0], [0.0, 0.0, 0.0]]), np.array([1.0, 1.0, 0.0]), 0, 1,
     "normalized", "zero or negative degree"),
    (np.array([[0.0, 1.0], [1.0, 0.0]]), np.ones(2), 0, 1, "bogus", "unknown matrix kind"),
    (np.array([[0.0, np.inf], [np.inf, 0.0]]), np.ones(2), 0, 1, "laplacian", "non-finite"),
    (np.array([[0.0, 1.0], [1.0, 0.0]]), np.ones(3), 0, 1, "laplacian", "3 degrees for 2 vertices"),
])
def test_refusals(adj, deg, a, b, kind, match):
    with pytest.raises(SymmetryError, match=match) as info:
        list(blocks([PowerOperand(adj, deg, 3)], a, b, kind))
    assert isinstance(info.value, InputError) and "\n" not in str(info.value)


def test_size_limit_refused_before_work():
    star = np.array([[0.0, 1, 1, 1], [1, 0, 0, 0], [1, 0, 0, 0], [1, 0, 0, 0]])
    op = PowerOperand(star, star.sum(axis=1), 40)
    p = plan([op], 0, 1, "laplacian")  # cheap: dimension formulas only
    assert p.total_check == p.order == 4**40
    with pytest.raises(SymmetryError, match="exceeds the limit"):
        next(blocks([op], 0, 1, "laplacian", max_block=2000))
    with pytest.raises(SymmetryError, match="exceeds the limit"):
        p.check(max_work=10**9)
