"""When this process may fork a helper that works beside it.

The command-line report forks twice: a worker that writes the report while
the analysis runs (:mod:`trimlog.views.report_worker`) and a second page
writer (:func:`trimlog.views.pdf_layout.save_pdf`).  Both ask
:func:`fork_may_help` first.  This module imports nothing heavy: the first
caller asks before pandas or matplotlib are loaded.
"""

from __future__ import annotations

import os
import threading


def free_cpus() -> int:
    """CPUs this process may run on.

    >>> free_cpus() >= 1
    True
    """
    try:
        return len(os.sched_getaffinity(0))
    except (AttributeError, OSError):
        return os.cpu_count() or 1


def fork_may_help() -> bool:
    """Whether a forked process can work beside this one, safely and in parallel.

    Only where ``os.fork`` exists, two CPUs are free to this process and no
    other thread runs: a fork copies one thread, and a lock another thread
    holds would stay held in the child for ever (a command-line run, not the
    dashboard's server).
    """
    return hasattr(os, "fork") and threading.active_count() == 1 and free_cpus() >= 2
