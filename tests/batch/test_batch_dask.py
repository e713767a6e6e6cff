"""The Dask engine on a loopback dask.distributed LocalCluster gives the local run's results.

Skipped only when dask is not installed and CI is not set; under CI the optional extra must be
installed and these tests run.
"""

from __future__ import annotations

import importlib.util
import os

import numpy as np
import pytest

from growthcore.batch import fit_batch, rows
from growthcore.data import Series

HAVE_DASK = importlib.util.find_spec("distributed") is not None and importlib.util.find_spec("dask") is not None
pytestmark = pytest.mark.skipif(not HAVE_DASK and not os.environ.get("CI"),
                                reason="dask is an optional extra (growthcore[dask]); set CI to require it")


def invented(n: int) -> list[Series]:
    rng = np.random.default_rng(9)
    t = np.arange(30) * 0.5
    out = []
    for i in range(n):
        k = rng.uniform(0.7, 1.3)
        p = k / (1 + (k / 0.02 - 1) * np.exp(-0.5 * t)) * (1 + 0.03 * rng.standard_normal(t.size))
        out.append(Series(t, p, name=f"S{i}"))
    out.append(Series(t[:2], np.array([0.1, 0.2]), name="short"))  # fails in its row on every engine
    return out


@pytest.fixture(scope="module")
def client():
    from distributed import Client, LocalCluster

    # in-process workers talk over the in-process transport: no network port is opened
    cluster = LocalCluster(n_workers=2, threads_per_worker=1, processes=False, dashboard_address=None)
    c = Client(cluster)
    yield c
    c.close()
    cluster.close()


def test_dask_run_equals_local_run(client) -> None:  # type: ignore[no-untyped-def]
    series = invented(13)
    models = ["logistic-curve", "logistic"]
    local = fit_batch(series, models, workers=1, chunk_size=4)
    remote = fit_batch(series, models, engine="dask", client=client, chunk_size=4)
    assert remote.engine == "dask"
    assert rows(local) == rows(remote)
    assert [f.series for f in local.fits] == [f.series for f in remote.fits]
    assert sum(not f.result.success for f in remote.fits) == 2


def test_dask_scheduler_address(client) -> None:  # type: ignore[no-untyped-def]
    series = invented(4)
    local = fit_batch(series, ["logistic-curve"], workers=1)
    remote = fit_batch(series, ["logistic-curve"], engine="dask", scheduler=client.scheduler.address)
    assert rows(local) == rows(remote)
