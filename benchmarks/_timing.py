"""Wall and processor time of one call, for the benchmarks (ratios measured in one run)."""

from __future__ import annotations

import time


def timed(fn):
    """``(fn(), wall seconds, processor seconds)``."""
    w, c = time.perf_counter(), time.process_time()
    out = fn()
    return out, time.perf_counter() - w, time.process_time() - c
