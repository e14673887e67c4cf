"""Clean stops (:mod:`tm_compare.models._parallel`): a signal to a parallel sweep ends its
worker processes and removes its temporary folder.

Batch schedulers stop a job with SIGTERM (common practice on Slurm and similar schedulers);
Ctrl+C sends SIGINT. Each test starts a real sweep in a child process, waits until its workers
and its temporary folder exist, sends the signal, and checks what is left: no process the sweep
started and nothing in its temporary folder. The exit code follows the shell convention
128 + signal number (common practice).
"""

from __future__ import annotations

import os
import signal
import subprocess
import sys
import textwrap
import time
from pathlib import Path

import pytest

psutil = pytest.importorskip("psutil")  # installed with dask's distributed

pytestmark = pytest.mark.slow

ROOT = Path(__file__).resolve().parent.parent


@pytest.fixture(scope="module")
def project(tmp_path_factory):
    """A project with a prepared corpus of 300 invented articles and no sweep yet."""
    from tm_compare.demo.quillhaven import make_frame
    from tm_compare.project import Project
    from tm_compare.text.corpus import Corpus, save_corpus
    from tm_compare.text.prepared import prepare

    folder = tmp_path_factory.mktemp("stops") / "project"
    frame = make_frame(300, random_state=0)
    corpus = Corpus.from_frame(frame, group="reader")
    project = Project.create(folder)
    save_corpus(corpus, project)
    prepare(corpus, project=project)
    return folder


def _start(argv: list[str], tmp: Path) -> tuple[subprocess.Popen, psutil.Process]:
    env = dict(os.environ, TMPDIR=str(tmp), JOBLIB_TEMP_FOLDER=str(tmp), PYTHONPATH=str(ROOT))
    child = subprocess.Popen(
        [sys.executable, *argv], env=env, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True
    )
    return child, psutil.Process(child.pid)


def _wait_for(condition, seconds: float = 180) -> None:
    end = time.monotonic() + seconds
    while time.monotonic() < end:
        if condition():
            return
        time.sleep(0.3)
    raise AssertionError("the sweep never reached the state to interrupt")


def _stop_and_check(child, parent, tmp: Path, signum: int, workers: int) -> str:
    _wait_for(lambda: len(parent.children(recursive=True)) >= workers)
    time.sleep(1.0)  # let the fits start
    started = parent.children(recursive=True)
    assert len(started) >= workers
    child.send_signal(signum)
    try:
        _, err = child.communicate(timeout=60)
    except subprocess.TimeoutExpired:  # pragma: no cover - the failure this test guards
        for proc in [parent, *started]:
            proc.kill()
        raise
    _, alive = psutil.wait_procs(started, timeout=15)
    assert not alive, f"processes left running after the signal: {alive}"
    left = [p for p in tmp.rglob("*") if p.is_file() or p.name.startswith("tm_compare-")]
    assert not left, f"temporary files left: {left}"
    return err


@pytest.mark.parametrize("signum", [signal.SIGTERM, signal.SIGINT])
def test_a_signal_ends_the_workers_and_removes_the_temporary_folder(project, tmp_path, signum):
    tmp = tmp_path / "tmp"
    tmp.mkdir()
    argv = ["-m", "tm_compare", "sweep", str(project), "--jobs", "2", "--k", "4,5,6,7"]
    # Slow on purpose (gensim's engine, every one of 60 passes), so fits are still running when
    # the signal comes.
    argv += ["--seeds", "2", "--passes", "60", "--tol", "0", "--engine", "gensim", "--no-progress"]
    child, parent = _start(argv, tmp)
    _wait_for(lambda: any(tmp.glob("tm_compare-sweep-*")))  # the shared matrix is written
    err = _stop_and_check(child, parent, tmp, signum, workers=2)
    assert child.returncode == 128 + signum
    assert f"Stopped by {signal.Signals(signum).name}" in err and "Traceback" not in err
    assert not (project / "scores").exists()  # the sweep did not finish, nothing half-written


def test_sigterm_on_a_sweep_with_a_dask_client_stops_its_workers(project, tmp_path):
    pytest.importorskip("distributed")
    tmp = tmp_path / "tmp"
    tmp.mkdir()
    script = textwrap.dedent(
        f"""
        import dask
        import distributed
        from tm_compare.models import sweeps
        from tm_compare.models._parallel import Stopped
        from tm_compare.models.sweeps import sweep
        from tm_compare.text.prepared import load_prepared

        submit = sweeps._run_dask

        def marked(*args):  # tells the test that the fits are being sent to the workers
            open({str(tmp_path / "running")!r}, "w").close()
            yield from submit(*args)

        sweeps._run_dask = marked

        prepared = load_prepared({str(project)!r})
        # Dask's own scratch space (its lock files) goes elsewhere: tmp is for tm_compare's files.
        dask.config.set({{"temporary-directory": {str(tmp_path / "dask")!r}}})
        if __name__ == "__main__":
            with distributed.LocalCluster(
                n_workers=2, threads_per_worker=1, processes=True, dashboard_address=None
            ) as cluster, distributed.Client(cluster) as client:
                try:
                    # slow on purpose: fits are still running when the signal comes
                    sweep(prepared, k=[4, 5, 6, 7], seeds=2, passes=60, tol=0, engine="gensim",
                          client=client, progress=False)
                except Stopped as exc:
                    print(exc)
                    assert not [f for f in client.futures if client.futures[f].status == "pending"]
        """
    )
    path = tmp_path / "run.py"
    path.write_text(script)
    child, parent = _start([str(path)], tmp)
    _wait_for(lambda: (tmp_path / "running").exists())
    err = _stop_and_check(child, parent, tmp, signal.SIGTERM, workers=2)
    assert child.returncode == 0, err  # the script caught Stopped and closed its cluster
