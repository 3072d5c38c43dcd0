"""Timing helpers shared by the benchmark scripts: best-of-repeats wall
times, and skfunc imported from the working tree (the scripts run from the
repository root without installing it).

A script imports this module (``from _timing import ...``; the script's own
folder is first on ``sys.path`` when it runs as a file) before skfunc.
"""

import sys
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[2]
if str(ROOT) not in sys.path:
    sys.path.insert(0, str(ROOT))


def round_times(funcs, repeat):
    """Wall times of each function in each of ``repeat`` interleaved rounds
    (a dict of name to function: a dict of name to an array of times), so
    that a busy machine slows all of the functions of a round alike."""
    times = {key: np.empty(repeat) for key in funcs}
    for r in range(repeat):
        for key, func in funcs.items():
            start = time.perf_counter()
            func()
            times[key][r] = time.perf_counter() - start
    return times


def best_times(funcs, repeat):
    """Best wall time of each function over ``repeat`` runs.

    ``funcs`` is a list (a list of times is returned) or a dict of name to
    function (a dict of name to time). The repeats are interleaved, so that
    a busy machine slows all of the functions alike.
    """
    named = funcs if isinstance(funcs, dict) else dict(enumerate(funcs))
    best = {key: float(times.min()) for key, times in round_times(named, repeat).items()}
    return best if isinstance(funcs, dict) else list(best.values())


def best_time(func, repeat):
    """Shortest wall-clock time of ``repeat`` calls of ``func()``, in seconds."""
    return best_times([func], repeat)[0]


def status_bytes(field):
    """A memory field of ``/proc/self/status`` (``VmRSS``, ``VmHWM``) in bytes."""
    with open("/proc/self/status") as status:
        for line in status:
            if line.startswith(field + ":"):
                return int(line.split()[1]) * 1024
    raise RuntimeError(f"{field} not in /proc/self/status")
