"""Many writers at once: 8 processes x 200 writes against one store, SQLite and PostgreSQL.

Every write must end either stored or reported as a LabelConflictError (no lost update, no
other error), the history must hold exactly the stored writes, and the store must pass its
integrity check. Workers share two analysts and three topics so that edits collide often.
"""

import multiprocessing

import pytest

from tm_compare.errors import LabelConflictError
from tm_compare.labels.store import LabelStore

MODEL = "quillhaven-concurrency"
PROCESSES, WRITES, TOPICS = 8, 200, 3


def _worker(url, worker, barrier, results):
    store = LabelStore(url, analyst=f"coder-{worker % 2}", timeout=60)
    stored = conflicts = 0
    barrier.wait()  # all processes start writing together
    for i in range(WRITES):
        topic = (worker + i) % TOPICS
        latest = store.label(MODEL, topic)
        try:
            store.save(
                MODEL,
                topic,
                name=f"worker {worker} write {i}",
                based_on=0 if latest is None else latest.version,
            )
            stored += 1
        except LabelConflictError:
            conflicts += 1
    store.close()
    results.put((worker, stored, conflicts))


@pytest.mark.slow
@pytest.mark.timeout(240)
def test_concurrent_writers_lose_nothing(store_url):
    LabelStore(store_url).close()  # create the store before the race
    ctx = multiprocessing.get_context("spawn")
    barrier, results = ctx.Barrier(PROCESSES), ctx.Queue()
    procs = [
        ctx.Process(target=_worker, args=(store_url, w, barrier, results)) for w in range(PROCESSES)
    ]
    for proc in procs:
        proc.start()
    outcomes = [results.get(timeout=200) for _ in procs]
    for proc in procs:
        proc.join(timeout=30)
        assert proc.exitcode == 0
    assert len(outcomes) == PROCESSES
    assert all(stored + conflicts == WRITES for _, stored, conflicts in outcomes)
    total_stored = sum(stored for _, stored, _ in outcomes)
    assert sum(conflicts for _, _, conflicts in outcomes) > 0  # the writers did collide
    with LabelStore(store_url) as store:
        history = store.history(MODEL)
        assert len(history) == total_stored
        report = store.check()
        assert report.ok, report.problems
        # Versions of each (topic, analyst) are exactly 1..n: no write was lost or doubled.
        for _, versions in history.groupby(["topic", "analyst"])["version"]:
            assert sorted(versions) == list(range(1, len(versions) + 1))
