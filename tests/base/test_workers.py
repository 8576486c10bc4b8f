"""The one worker-count rule (stillhook.workers): caller's choice, $STILLHOOK_WORKERS, cores; never more than tasks."""

from __future__ import annotations

import os

import pytest

from stillhook.errors import ConfigError
from stillhook.workers import WORKERS_VARIABLE, map_tasks, process_pool, start_in_background, worker_count


def test_the_callers_choice_wins_and_never_exceeds_the_tasks(monkeypatch):
    monkeypatch.setenv(WORKERS_VARIABLE, "1")
    assert worker_count(8, 3) == 3 and worker_count(2, 5) == 2 and worker_count(0, 4) == 1


def test_the_environment_caps_the_default(monkeypatch):
    monkeypatch.setenv(WORKERS_VARIABLE, "1")
    assert worker_count(8) == 1
    monkeypatch.setenv(WORKERS_VARIABLE, "3")
    assert worker_count(8) == 3 and worker_count(2) == 2
    monkeypatch.delenv(WORKERS_VARIABLE)
    assert worker_count(1000) == len(os.sched_getaffinity(0))


@pytest.mark.parametrize("text", ["0", "-2", "two", "1.5"])
def test_a_bad_environment_value_is_one_clear_error(monkeypatch, text):
    monkeypatch.setenv(WORKERS_VARIABLE, text)
    with pytest.raises(ConfigError, match=r"STILLHOOK_WORKERS = .*allowed: a whole number >= 1"):
        worker_count(4)


def test_the_pool_runs_tasks_in_worker_processes():
    with process_pool(2) as pool:
        pids = set(pool.map(worker_pid, range(4)))
    assert os.getpid() not in pids and 1 <= len(pids) <= 2


def worker_pid(_):
    return os.getpid()


def divide(a, b):
    return a / b


def test_a_background_process_returns_the_result_or_raises_its_exception():
    one = start_in_background(divide, 6.0, 3.0)
    two = start_in_background(divide, 1.0, 0.0)
    assert one() == 2.0
    with pytest.raises(ZeroDivisionError):
        two()


def test_mapped_tasks_come_back_in_order_in_a_pool_and_here():
    tasks = [(float(k), 4.0) for k in range(7)]
    here = list(map_tasks(divide, tasks, 1))
    assert here == [k / 4.0 for k in range(7)]
    assert list(map_tasks(divide, tasks, 2)) == here
