"""Worker processes for the search strategies.

The processes are forked once per solve and inherit the search state (the
constraints, the environment rule with its caches); each call hands them
small arguments and gets back plain results (molecules as RDKit binaries).
Work is split deterministically (every n-th distribution, or fixed halves),
so the union of the parts does not depend on the number of processes.
"""

from __future__ import annotations

import multiprocessing

from rdkit import Chem

from .orderly import PassOutcome, PassState, run_pass
from .plans import plan_shard

__all__ = ["WorkerPool", "merge_found", "worker_count", "run_local"]

_FORK_STATE: PassState | None = None
#: per-process memory of a worker (e.g. the annealing evaluator and its cache)
_LOCAL: dict = {}


def _pass_in_child(args) -> PassOutcome:
    bound, limit, shard, n, keep = args
    return run_pass(_FORK_STATE, bound, limit, shard, n, keep, True)


def _plan_in_child(args):
    shard, n, keep, deadline, stall = args
    return plan_shard(_FORK_STATE, shard, n, keep, deadline, True, stall)


def _call_in_child(args):
    fn, payload = args
    return fn(_FORK_STATE, _LOCAL, payload)


class WorkerPool:
    """Processes (fork) that share one search state."""

    def __init__(self, state: PassState, workers: int, keep: int):
        global _FORK_STATE
        _FORK_STATE = state
        self.n = workers
        self.keep = keep
        self.pool = multiprocessing.get_context("fork").Pool(workers)

    def run(self, bound: float, limit: float) -> PassOutcome:
        """One orderly pass, each process on its shard of distributions."""
        parts = self.pool.map(_pass_in_child, [(bound, limit, i, self.n, self.keep) for i in range(self.n)])
        found = merge_found(parts)
        log = [(name, sum(p.filter_log[i][1] for p in parts), sum(p.filter_log[i][2] for p in parts))
               for i, (name, _, _) in enumerate(parts[0].filter_log)]
        return PassOutcome(found, all(p.complete for p in parts), sum(p.bound_pruned for p in parts),
                           sum(p.distributions for p in parts), log,
                           sum(p.checked for p in parts), sum(p.rejected for p in parts),
                           min(p.dropped_min for p in parts), sum(p.n_found for p in parts))

    def run_plans(self, keep: int, deadline: float, stall: float | None = None):
        """The plan search shared by the processes; the union's bound is the
        smallest of the parts' bounds."""
        from ..generate.planned import PlanSearch

        parts = self.pool.map(_plan_in_child, [(i, self.n, keep, deadline, stall) for i in range(self.n)])
        return PlanSearch(merge_found(parts), min(p.lower for p in parts), all(p.exhausted for p in parts),
                          sum(p.plans for p in parts), sum(p.solves for p in parts))

    def map(self, fn, payloads):
        """``fn(state, local, payload)`` for each payload, in the processes
        (one payload at a time to whichever is free), results in order;
        ``local`` is the process's own memory, kept between calls."""
        return self.pool.map(_call_in_child, [(fn, p) for p in payloads], chunksize=1)

    def close(self):
        self.pool.terminate()
        self.pool.join()


def merge_found(parts) -> dict:
    """Union of workers' ``found`` maps (molecules as RDKit binaries), keeping
    the lower cost when two workers list one structure."""
    found: dict = {}
    for part in parts:
        for smi, (cost, binary) in part.found.items():
            known = found.get(smi)
            if known is None or cost < known[0]:
                found[smi] = (cost, Chem.Mol(binary))
    return found


def worker_count(requested: int) -> int:
    """Processes for the search: ``requested``, or 1 inside a worker process."""
    if multiprocessing.parent_process() is not None:
        return 1
    return max(1, requested)


def run_local(state, fn, payloads):
    """:meth:`WorkerPool.map` in this process (one worker)."""
    return [fn(state, _LOCAL_PARENT, p) for p in payloads]


_LOCAL_PARENT: dict = {}
