"""The sweep on a real Dask cluster equals the local run.

Two setups: an in-process ``LocalCluster`` (a client passed in), and the way a cluster
runs: ``dask scheduler`` and two ``dask worker ADDRESS`` started as separate processes
over TCP on 127.0.0.1, one worker killed in the middle of the sweep.
"""

from __future__ import annotations

import os
import shutil
import signal
import socket
import subprocess
import sys

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
    _assert_same(on_client, local)
    np.testing.assert_array_equal(
        by_address.get_fit(k=4, seed=0).topic_term, local.get_fit(k=4, seed=0).topic_term
    )


def _assert_same(result, local):
    pd.testing.assert_frame_equal(
        result.scores_.drop(columns="fit_seconds"), local.scores_.drop(columns="fit_seconds")
    )
    assert set(result.fits_) == set(local.fits_)
    for key in local.fits_:
        np.testing.assert_array_equal(result.fits_[key].topic_term, local.fits_[key].topic_term)
        np.testing.assert_array_equal(
            result.fits_[key].doc_dirichlet, local.fits_[key].doc_dirichlet
        )


def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


def _dask_command() -> list[str]:
    # The `dask` console script of this environment; `python -m distributed.cli.*` otherwise.
    found = shutil.which(
        "dask", path=os.path.dirname(sys.executable) + os.pathsep + os.environ.get("PATH", "")
    )
    return [found] if found else [sys.executable, "-m", "dask"]


@pytest.fixture
def tcp_cluster(tmp_path):
    """``dask scheduler`` and two ``dask worker`` processes on 127.0.0.1; all killed at the end."""
    port = _free_port()
    address = f"tcp://127.0.0.1:{port}"
    dask = _dask_command()
    env = {
        **os.environ,
        "OMP_NUM_THREADS": "1",
        "OPENBLAS_NUM_THREADS": "1",
        "MKL_NUM_THREADS": "1",
    }
    procs: list[subprocess.Popen] = []

    def start(args, name):
        log = open(tmp_path / f"{name}.log", "w")  # noqa: SIM115 - closed with the process
        proc = subprocess.Popen(
            [*dask, *args], stdout=log, stderr=subprocess.STDOUT, env=env, start_new_session=True
        )
        proc.log = log
        procs.append(proc)
        return proc

    try:
        start(
            ["scheduler", "--host", "127.0.0.1", "--port", str(port), "--no-dashboard"], "scheduler"
        )
        workers = [
            start(
                [
                    "worker", address, "--host", "127.0.0.1", "--nthreads", "1",
                    "--no-nanny", "--no-dashboard", "--memory-limit", "0", "--name", name,
                ],
                name,
            )
            for name in ("worker-a", "worker-b")
        ]  # fmt: skip
        with distributed.Client(address, timeout=60) as client:
            client.wait_for_workers(2, timeout=120)
        yield address, workers
    finally:
        for proc in procs:
            if proc.poll() is None:
                os.killpg(proc.pid, signal.SIGKILL)
            proc.wait(timeout=30)
            proc.log.close()


#: Kill worker-b (``argv[2]`` is its process id) once both workers hold the training data and
#: worker-b is given a fit, before the sweep has finished; print "ready" once connected, then
#: "killed".
WATCHER = """
import os, signal, sys, time
import distributed
address, pid = sys.argv[1], int(sys.argv[2])
with distributed.Client(address, timeout=60) as watcher:
    print("ready", flush=True)
    deadline = time.monotonic() + 240
    while time.monotonic() < deadline:
        info = watcher.scheduler_info(n_workers=-1)["workers"]
        b = [a for a, w in info.items() if w.get("name") == "worker-b"]
        held = [set(where) for key, where in watcher.who_has().items() if "_hold" in str(key)]
        fits = watcher.processing(workers=b).get(b[0], ()) if b else ()
        if held and len(held[0]) == 2 and any("_train_shared" in str(f) for f in fits):
            os.killpg(pid, signal.SIGKILL)
            print("killed", flush=True)
            break
        time.sleep(0.05)
"""


@pytest.mark.timeout(300)
def test_tcp_cluster_survives_a_lost_worker(tcp_cluster):
    # Dask reschedules the tasks of a worker that disappears (its scheduler notices the
    # closed connection); the sweep must finish with the fits of a local run, bit for bit.
    address, workers = tcp_cluster
    small = lee_corpus(120)
    grid = {"k": [3, 4, 5, 6], "seeds": 2}
    local = sweep(small, **grid, **FAST)
    victim = workers[1]
    # The watcher is a process of its own: two clients of one cluster in one process (one per
    # thread) can trip over each other's event loops, which is not what is tested here.
    watcher = subprocess.Popen(
        [sys.executable, "-c", WATCHER, address, str(victim.pid)],
        stdout=subprocess.PIPE,
        stderr=subprocess.STDOUT,
        text=True,
    )
    ready = watcher.stdout.readline()  # connected before the sweep starts
    assert ready.strip() == "ready", ready
    try:
        remote = sweep(small, **grid, scheduler=address, **FAST)
    finally:
        if watcher.poll() is None:
            watcher.kill()
        said = watcher.communicate(timeout=60)[0]
    with distributed.Client(address, timeout=60) as client:
        names = [w["name"] for w in client.scheduler_info(n_workers=-1)["workers"].values()]
    killed = "killed" in said
    assert killed, f"worker-b never ran a fit before the sweep ended: {said}"
    assert victim.wait(timeout=30) == -signal.SIGKILL
    assert names == ["worker-a"]  # the sweep finished on the one worker left
    _assert_same(remote, local)
