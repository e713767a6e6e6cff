"""Running batch tasks on a Dask cluster (the optional extra ``growthcore[dask]``).

Each task (one form, one chunk of series) becomes one Dask future; the tasks are the same as a
local run's, so the results are identical.
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any

from growthcore.batch.tasks import Task, TaskOutput, run_task
from growthcore.errors import GrowthcoreInputError


def _distributed() -> Any:
    try:
        import distributed
    except ImportError:
        raise GrowthcoreInputError(
            "the dask engine needs the optional extra: pip install 'growthcore[dask]' "
            "(dask and distributed)") from None
    return distributed


def run_dask(tasks: Sequence[Task], *, scheduler: str | None = None, client: Any = None, workers: int = 2,
             progress: Any = None) -> list[TaskOutput]:
    """Run ``tasks`` on ``client``, or on the scheduler at ``scheduler``, or on a local Dask cluster.

    A local cluster (no address) has ``workers`` single-threaded worker processes and is closed
    afterwards; a given client or scheduler is left running.
    """
    distributed = _distributed()
    own = None
    if client is None:
        try:
            if scheduler:
                client = distributed.Client(scheduler, timeout="20s")
            else:
                own = distributed.LocalCluster(n_workers=workers, threads_per_worker=1, processes=True,
                                               dashboard_address=None)
                client = distributed.Client(own)
        except (OSError, TimeoutError) as exc:
            where = scheduler or "a local cluster"
            raise GrowthcoreInputError(f"cannot reach the Dask scheduler at {where}: {exc}") from None
        close = True
    else:
        close = False
    try:
        futures = client.map(run_task, list(tasks), pure=False)
        index = {f.key: i for i, f in enumerate(futures)}
        out: list[TaskOutput | None] = [None] * len(futures)
        for done, future in enumerate(distributed.as_completed(futures), start=1):
            out[index[future.key]] = future.result()
            if progress:
                progress(done, len(futures))
        return [o for o in out if o is not None]
    finally:
        if close:
            client.close()
            if own is not None:
                own.close()
