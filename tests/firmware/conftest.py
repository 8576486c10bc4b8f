"""Fixtures shared by the firmware tests."""

from __future__ import annotations

import numpy as np
import pytest
from scipy.signal import iirnotch

from stillhook.firmware.plan import plan_for_project
from stillhook.shaping.envelope_design import schedule_for_project
from tests.firmware.test_plan import two_mode_schedule


@pytest.fixture(scope="session")
def st_plans(demo_project):
    """Emit plans covering the PLC target's cases, by prefix (the demo design is computed once):

    sa  Q15, the project's own schedule, no notch
    sb  Q15, 9 synthetic two-mode rows, a Q15-friendly notch pair (as test_c_runtime.py)
    sc  Q31, 17 rows of which rows 3 and 4 have negative impulses (UM-ZV), no notch
    sd  Q31, the project's own schedule and notch
    se  Q15, one row (no lookup)
    """
    sched = schedule_for_project(demo_project)
    b1, a1 = iirnotch(4.0, 2.0, fs=200.0)
    b2, a2 = iirnotch(9.0, 3.0, fs=200.0)
    return {
        "sa": plan_for_project(demo_project, schedule=sched, fmt="q15", prefix="sa", include_notch=False),
        "sb": plan_for_project(demo_project, schedule=two_mode_schedule(demo_project, 9), fmt="q15", prefix="sb",
                               notch_sos=np.array([[*b1, *a1], [*b2, *a2]])),
        "sc": plan_for_project(demo_project, schedule=two_mode_schedule(demo_project, 17, negative_rows=(3, 4)),
                               fmt="q31", prefix="sc", include_notch=False),
        "sd": plan_for_project(demo_project, schedule=sched, fmt="q31", prefix="sd", include_notch=True),
        "se": plan_for_project(demo_project, schedule=two_mode_schedule(demo_project, 1), fmt="q15", prefix="se",
                               include_notch=False),
    }
