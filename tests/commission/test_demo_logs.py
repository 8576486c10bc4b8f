"""The shipped demo logs are what scripts/make_demo_logs.py writes (fixed seeds)."""

from __future__ import annotations

import numpy as np

from stillhook.commission.demo_logs import DEMO_LOGS, SENSORS, demo_log_bytes, demo_log_texts
from stillhook.commission.logs import parse_log


def test_the_shipped_logs_regenerate_from_the_script(demo_project):
    fresh = demo_log_texts(demo_project.envelope)
    shipped = demo_log_bytes()
    assert sorted(fresh) == sorted(shipped) == sorted(DEMO_LOGS)
    for name, text in fresh.items():
        a, b = parse_log(text.encode(), name), parse_log(shipped[name], name)
        np.testing.assert_array_equal(a.time_s, b.time_s)
        for col, (_, step, _) in SENSORS.items():
            # identical but for a value on a quantization boundary (last-bit differences between platforms)
            diff = np.abs(a.columns[col] - b.columns[col])
            assert diff.max() <= step * 1.0001 and np.count_nonzero(diff) <= 3
