"""The CLI runs one BLAS thread per process unless the user says otherwise (stillhook.cli.BLAS_THREAD_VARIABLES)."""

from __future__ import annotations

import os
import subprocess
import sys

SHOW = ("import stillhook.cli, numpy, os; "
        "print(' '.join(os.environ[v] for v in stillhook.cli.BLAS_THREAD_VARIABLES))")


def run(env_extra: dict) -> str:
    env = {k: v for k, v in os.environ.items() if not k.endswith("_NUM_THREADS")}
    env.update(env_extra)
    done = subprocess.run([sys.executable, "-c", SHOW], capture_output=True, text=True, env=env, check=True)
    return done.stdout.strip()


def test_one_blas_thread_by_default_and_the_users_setting_wins():
    assert run({}) == "1 1 1"
    assert run({"OPENBLAS_NUM_THREADS": "4"}) == "4 1 1"
