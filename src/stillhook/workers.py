"""How many worker processes a parallel step uses: the one rule for the sweep, the design schedule and the figures."""

from __future__ import annotations

import multiprocessing
import os
from concurrent.futures import ProcessPoolExecutor

from stillhook.errors import ConfigError

__all__ = ["POOL_CONTEXT", "WORKERS_VARIABLE", "map_tasks", "process_pool", "start_in_background", "worker_count"]

#: Environment variable that caps the worker processes of every parallel step.
WORKERS_VARIABLE = "STILLHOOK_WORKERS"

#: Worker processes are forked where the platform forks (the parent's imports of numpy, scipy and
#: matplotlib are inherited instead of repeated: ~1 s per worker on a loaded machine), else spawned.
POOL_CONTEXT = multiprocessing.get_context("fork" if "fork" in multiprocessing.get_all_start_methods() else "spawn")


def worker_count(n_tasks: int, requested: int | None = None) -> int:
    """Processes for ``n_tasks`` independent tasks: ``requested``, or one per available core; never more than tasks.

    Parameters
    ----------
    n_tasks : int >= 0
        Tasks to spread (rows, chunks of rigs, figures).
    requested : int >= 1, optional
        A caller's choice (tests pin it); default: ``$STILLHOOK_WORKERS`` when set (a whole number >= 1,
        e.g. 1 where something else already runs one process per core), else the cores this process may
        run on.

    Raises
    ------
    ConfigError
        ``$STILLHOOK_WORKERS`` is not a whole number >= 1.
    """
    if requested is None:
        requested = _workers_from_environment()
    if requested is None:
        try:
            requested = len(os.sched_getaffinity(0))
        except AttributeError:  # pragma: no cover - not on Linux
            requested = os.cpu_count() or 1
    return max(1, min(int(requested), int(n_tasks)))


def _workers_from_environment() -> int | None:
    text = os.environ.get(WORKERS_VARIABLE, "").strip()
    if not text:
        return None
    if not text.isdigit() or int(text) < 1:
        raise ConfigError(f"{WORKERS_VARIABLE} = {text!r}; allowed: a whole number >= 1 (worker processes)")
    return int(text)


def process_pool(n_workers: int) -> ProcessPoolExecutor:
    """A pool of ``n_workers`` processes started the one way every parallel step starts them (:data:`POOL_CONTEXT`)."""
    return ProcessPoolExecutor(n_workers, mp_context=POOL_CONTEXT)


def map_tasks(fn, tasks, n_workers: int):
    """``fn(*task)`` for every task, yielded in task order: in a pool of ``n_workers`` processes, or here when 1.

    ``fn`` must be a module-level function. The results are the same either way; consume them all (the
    pool closes when the generator does).
    """
    tasks = list(tasks)
    if n_workers > 1:
        with process_pool(n_workers) as pool:
            yield from pool.map(fn, *zip(*tasks, strict=True))
    else:
        for task in tasks:
            yield fn(*task)


def start_in_background(fn, *args, **kwargs):
    """Run ``fn(*args, **kwargs)`` in one new process (:data:`POOL_CONTEXT`) while this one goes on.

    Unlike a pool, this leaves no thread behind in this process, so pools started later here still fork a
    single-threaded process. ``fn`` must be a module-level function (picklable where processes are spawned).

    Returns
    -------
    callable () -> object
        Waits for the process and returns ``fn``'s result, or raises the exception ``fn`` raised.
    """
    receive, send = POOL_CONTEXT.Pipe(duplex=False)
    process = POOL_CONTEXT.Process(target=_run_and_send, args=(send, fn, args, kwargs), daemon=True)
    process.start()
    send.close()

    def result():
        try:
            ok, value = receive.recv()
        except EOFError:
            process.join()
            raise RuntimeError(f"background process for {fn.__name__} ended with exit code {process.exitcode} "
                               "before it sent a result") from None
        process.join()
        if not ok:
            raise value
        return value

    return result


def _run_and_send(send, fn, args, kwargs) -> None:
    try:
        outcome = (True, fn(*args, **kwargs))
    except BaseException as exc:  # the parent re-raises it
        outcome = (False, exc)
    send.send(outcome)
    send.close()
