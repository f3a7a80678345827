"""Running spatial tiles of work on a dask.distributed cluster (optional: ``pip install 'slipsense[dask]'``).

A :class:`DaskRunner` is handed to a :class:`~slipsense.core.raster.BlockRaster`; the core then
sends it its tiles of traces (see :func:`slipsense.core.traces.fit_trace_planes`).  Each task
carries its traces and the DEM's recipe (:class:`~slipsense.io.dem.DemBlocks`, a file path): the
worker opens the DEM itself and reads only the blocks under its tile, so workers must see the
DEM at the same path (a shared file system).  Results do not depend on the number of workers:
every trace draws from its own random stream.

Dask does the scheduling; slipsense only splits the work.
"""
from __future__ import annotations

import itertools
import logging
import uuid

from ..errors import InputError

__all__ = ["DaskRunner"]

_OPEN = {}  # per worker process: DemBlocks -> BlockRaster (its block cache serves later tasks)


def _remote(func, item, spec):
    raster = _OPEN.get(spec)
    if raster is None:
        raster = _OPEN[spec] = spec.open()
    before = raster.stats["blocks_read"]
    out = func(item, raster)
    return out, raster.stats["blocks_read"] - before


class DaskRunner:
    """Runs work units on Dask: a local cluster of ``workers`` processes on 127.0.0.1, or the
    running cluster whose scheduler is at ``scheduler`` (e.g. ``tcp://10.0.0.5:8786``)."""

    plans = False  # workers read the blocks of their own tiles

    def __init__(self, workers=None, scheduler=None, timeout_s=60):
        try:
            from dask.distributed import Client, LocalCluster
        except ImportError as exc:
            raise InputError("--workers/--scheduler need dask.distributed: pip install 'slipsense[dask]'") from exc
        if workers is not None and scheduler:
            raise InputError("give either --workers (a local cluster) or --scheduler (a running one), not both")
        self.cluster = None
        if scheduler:
            try:
                self.client = Client(scheduler, timeout=timeout_s)
            except (OSError, TimeoutError) as exc:
                raise InputError(f"cannot reach the Dask scheduler at {scheduler}: {exc}") from exc
        else:
            n = int(workers or 1)
            if n < 1:
                raise InputError(f"workers must be >= 1, got {workers!r}")
            self.cluster = LocalCluster(n_workers=n, threads_per_worker=1, processes=True,
                                        host="127.0.0.1", dashboard_address=None,
                                        silence_logs=logging.ERROR)
            self.client = Client(self.cluster, timeout=timeout_s)
        self.blocks_read = 0

    def map(self, func, items, grid, done=None):
        """``func(item, raster)`` for every item on the cluster; results in the order of ``items``."""
        from dask.distributed import as_completed

        spec = getattr(grid, "spec", None)
        if spec is None:
            raise InputError("work can go to Dask only for a DEM read from a file by blocks")
        token = uuid.uuid4().hex[:8]
        futures = [self.client.submit(_remote, func, item, spec, key=f"slipsense-tile-{token}-{k}", pure=False)
                   for k, item in zip(itertools.count(), items)]
        index = {f.key: k for k, f in enumerate(futures)}
        results = [None] * len(futures)
        try:
            for fut in as_completed(futures):
                k = index[fut.key]
                out, blocks = fut.result()
                results[k] = out
                self.blocks_read += blocks
                if "blocks_read" in getattr(grid, "stats", {}):
                    grid.stats["blocks_read"] += blocks
                if done is not None:
                    done(k)
        except BaseException:
            self.client.cancel(futures)
            raise
        return results

    def close(self):
        try:
            self.client.close()
        finally:
            if self.cluster is not None:
                self.cluster.close()
