"""The public block iterator: blocks in-process, on a local process pool, or on a Dask cluster.

Blocks are independent, so they are scheduled largest first (for load balance)
and yielded as they complete; each :class:`~powerspec.tiers.symmetry.block.Block`
carries its shape label.  With ``workers > 1`` a local pool of spawned processes
runs them, each with one BLAS thread (several BLAS threads per process on a
shared machine oversubscribe the cores and slow down by an order of magnitude);
with ``scheduler="tcp://host:port"`` a Dask distributed scheduler does (the
optional ``cluster`` extra; imported only then).

>>> import numpy as np
>>> from powerspec.tiers.symmetry.plan import PowerOperand
>>> k2 = PowerOperand(np.array([[0., 1], [1, 0]]), np.array([1., 1]), 3)
>>> got = sorted((blk.shape, blk.multiplicity)
...              for blk in blocks([k2], 0, 1, "laplacian", automorphisms=False))
>>> got
[(((2, 1),), 2), (((3,),), 1)]
"""

from __future__ import annotations

import math
import os
from collections.abc import Callable, Iterator
from concurrent.futures import ProcessPoolExecutor, as_completed
from multiprocessing import get_context

from powerspec.tiers.symmetry.blas import single_blas_thread
from powerspec.tiers.symmetry.block import Block, PreparedOperand, compute_block, prepare
from powerspec.tiers.symmetry.combinatorics import weyl_dimension
from powerspec.tiers.symmetry.errors import SymmetryError
from powerspec.tiers.symmetry.plan import PowerOperand, SymmetryPlan, plan

_THREAD_VARS = ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS")

POOL_MIN_WORK = 2 * 10**9
"""Below this work (sum of d^3) a local pool costs more to start (about a second per
spawned interpreter) than it saves, and the blocks run in-process."""


SMALL_BLOCK = 512
"""Blocks below this size run with one BLAS thread (threads cost more than they save there)."""


def _job(args: tuple) -> Block:
    parts, shapes, a, b, kind, mult = args
    dim = math.prod(weyl_dimension(lam, op.n) for (op, _), lam in zip(parts, shapes, strict=True))
    if dim < SMALL_BLOCK:
        with single_blas_thread():
            return compute_block(parts, shapes, a, b, kind, mult)
    return compute_block(parts, shapes, a, b, kind, mult)


def _jobs(
    ops: list[PreparedOperand], the_plan: SymmetryPlan, a: float, b: float, kind: str
) -> list[tuple]:
    specs = sorted(the_plan.specs, key=lambda s: -s.dim)
    jobs = []
    for s in specs:
        parts = [(ops[fi], copies) for fi, copies in the_plan.terms[s.term].parts]
        jobs.append((parts, s.shapes, a, b, kind, s.multiplicity))
    return jobs


def _local_pool(jobs: list[tuple], workers: int) -> Iterator[Block]:
    saved = {v: os.environ.get(v) for v in _THREAD_VARS}
    for v in _THREAD_VARS:
        os.environ[v] = "1"  # read by the spawned children when they import numpy
    try:
        with ProcessPoolExecutor(max_workers=workers, mp_context=get_context("spawn")) as pool:
            futures = [pool.submit(_job, j) for j in jobs]
            for v, old in saved.items():  # children have their environment; restore ours
                if old is None:
                    os.environ.pop(v, None)
                else:
                    os.environ[v] = old
            for fut in as_completed(futures):
                yield fut.result()
    finally:
        for v, old in saved.items():
            if old is None:
                os.environ.pop(v, None)
            else:
                os.environ[v] = old


def _dask(jobs: list[tuple], scheduler: str) -> Iterator[Block]:
    try:
        from distributed import Client
        from distributed import as_completed as dask_completed
    except ImportError as exc:  # the optional extra is missing
        raise SymmetryError("symmetry tier: a scheduler address needs dask[distributed]; install the "
                            "'cluster' extra (pip install 'powerspec[cluster]')") from exc
    try:
        client = Client(scheduler, set_as_default=False, timeout="10s")
    except OSError as exc:
        raise SymmetryError(f"symmetry tier: cannot reach the Dask scheduler at {scheduler}; "
                            "check the address or run without a scheduler") from exc
    try:
        futures = client.map(_job, jobs, pure=False)
        for fut in dask_completed(futures, loop=client.loop):
            yield fut.result()
    finally:
        client.close()


def blocks(operands: list[PowerOperand], a: float, b: float, kind: str, *, workers: int = 1,
           scheduler: str | None = None, progress: Callable[[int, int], None] | None = None,
           max_block: int | None = None, max_work: int | None = None,
           max_memory: int | None = None, automorphisms: bool = True) -> Iterator[Block]:
    """Yield the certified blocks of ``kind`` for the product of the operands under x∘y = a(x+y) + bxy.

    The union of the blocks' eigenvalues, each repeated ``multiplicity`` times, is the
    spectrum of the product matrix (n^k eigenvalues in all).  The plan is checked against
    the limits before any work (:class:`SymmetryError` on refusal or invalid input).
    ``progress(done, total)`` is called after each block.  ``automorphisms`` splits factors
    with an involutive automorphism first (same spectrum, much smaller blocks).
    """
    the_plan = plan(operands, a, b, kind, automorphisms=automorphisms)
    the_plan.check(max_block=max_block, max_work=max_work, max_memory=max_memory)
    if workers < 1:
        raise SymmetryError("symmetry tier: workers must be >= 1")
    ops = prepare(list(the_plan.factors), a, b, kind)
    jobs = _jobs(ops, the_plan, a, b, kind)
    total = len(jobs)
    if scheduler is not None:
        source = _dask(jobs, scheduler)
    elif workers > 1 and total > 1 and the_plan.work >= POOL_MIN_WORK:
        source = _local_pool(jobs, min(workers, total))
    else:
        source = (_job(j) for j in jobs)
    for done, blk in enumerate(source, 1):
        if progress is not None:
            progress(done, total)
        yield blk
