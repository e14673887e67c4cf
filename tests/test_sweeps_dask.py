"""The sweep on a real Dask cluster (two worker processes) equals the local run."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from test_fits import lee_corpus
from test_sweeps import FAST

from tm_compare.models.sweeps import sweep

distributed = pytest.importorskip("distributed")
pytestmark = pytest.mark.slow


def test_cluster_results_equal_the_local_run():
    small = lee_corpus(120)
    local = sweep(small, k=[3, 4], seeds=1, **FAST)
    with (
        distributed.LocalCluster(
            n_workers=2, threads_per_worker=1, processes=True, dashboard_address=None
        ) as cluster,
        distributed.Client(cluster) as client,
    ):
        with distributed.get_task_stream(client) as stream:
            on_client = sweep(small, k=[3, 4], seeds=1, client=client, **FAST)
        by_address = sweep(small, k=[4], seeds=1, scheduler=cluster.scheduler_address, **FAST)
        assert client.status == "running"  # a client passed in is left open
    ran = [task["key"] for task in stream.data]
    assert sum("_train_shared" in str(key) for key in ran) == 2  # both fits ran on the workers
    pd.testing.assert_frame_equal(
        on_client.scores_.drop(columns="fit_seconds"), local.scores_.drop(columns="fit_seconds")
    )
    for key in local.fits_:
        np.testing.assert_array_equal(
            on_client.fits_[key].doc_dirichlet, local.fits_[key].doc_dirichlet
        )
    np.testing.assert_array_equal(
        by_address.get_fit(k=4, seed=0).topic_term, local.get_fit(k=4, seed=0).topic_term
    )
