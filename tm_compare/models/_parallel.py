"""Clean stops of a parallel sweep: SIGTERM and SIGINT end the workers and the temporary files.

Batch schedulers stop a job with SIGTERM (then SIGKILL after a grace period). Python's default
for SIGTERM ends the main process at once, without unwinding: joblib's worker processes (loky)
then live on, holding the memory-mapped document-term matrix in a temporary folder that is
never removed. :func:`clean_stop` installs handlers for SIGTERM and SIGINT for the duration of
the parallel section: they kill the workers (``shutdown(kill_workers=True)`` of loky's
reusable executor) and raise :class:`Stopped`, so the ``with`` blocks around the section
unwind -- the temporary folder is deleted, Dask futures are cancelled and a client the sweep
opened is closed. Fits finished before the signal are already saved; a rerun resumes.
"""

from __future__ import annotations

import contextlib
import signal
import threading

#: Exit code of a process ended by signal ``n``: 128 + n (shell convention, common practice).
SIGNAL_EXIT_BASE = 128


class Stopped(KeyboardInterrupt):
    """The sweep was stopped by a signal; workers and temporary files are gone."""

    def __init__(self, signum: int):
        self.signum = signum
        name = signal.Signals(signum).name
        super().__init__(
            f"Stopped by {name}: the worker processes were ended and temporary files removed. "
            "Fits finished before the signal are saved; run the same sweep again to resume."
        )

    @property
    def exit_code(self) -> int:
        return SIGNAL_EXIT_BASE + self.signum


def kill_workers() -> None:
    """End joblib's reusable pool of worker processes (loky), if one was started.

    The pool object is shut down directly: asking ``get_reusable_executor()`` for it would
    build a new pool (joblib's differs in its arguments) after waiting for the running fits.
    """
    try:
        from joblib.externals.loky import reusable_executor
    except ImportError:  # pragma: no cover - joblib always ships loky
        return
    executor = reusable_executor._executor
    if executor is not None:
        executor.shutdown(wait=False, kill_workers=True)


@contextlib.contextmanager
def clean_stop(signals=(signal.SIGTERM, signal.SIGINT)):
    """Within the block, SIGTERM and SIGINT kill the worker pool and raise :class:`Stopped`.

    Only the main thread can install signal handlers; elsewhere the block runs unchanged.
    The previous handlers are restored on exit.
    """
    if threading.current_thread() is not threading.main_thread():
        yield
        return

    def stop(signum, _frame):
        for sig in signals:  # a second signal while unwinding is ignored, not re-raised
            signal.signal(sig, signal.SIG_IGN)
        kill_workers()
        raise Stopped(signum)

    previous = {sig: signal.signal(sig, stop) for sig in signals}
    try:
        yield
    except Stopped:
        kill_workers()  # workers started after the signal, if any
        raise
    finally:
        for sig, handler in previous.items():
            signal.signal(sig, handler)
