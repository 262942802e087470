"""Preloaded into the dask worker processes that wetcycle starts: they die with their parent.

A local cluster's worker processes are children of the wetcycle process.  If that process is
killed (SIGKILL cannot be caught), Linux sends each worker SIGKILL too, through
``prctl(PR_SET_PDEATHSIG)`` set here, instead of leaving orphans computing for minutes.  Elsewhere
(no prctl) the workers' ``death_timeout`` ends them once the scheduler is gone.
"""

import ctypes
import os
import signal

PR_SET_PDEATHSIG = 1  # <linux/prctl.h>


def die_with_parent():
    """Ask the kernel to kill this process when its parent ends; exit now if it already has."""
    parent = os.getppid()
    try:
        libc = ctypes.CDLL(None, use_errno=True)
        libc.prctl(PR_SET_PDEATHSIG, signal.SIGKILL, 0, 0, 0)
    except (OSError, AttributeError):
        return
    if os.getppid() != parent:  # the parent ended before prctl took effect
        os._exit(1)


def dask_setup(worker=None):
    """Hook called by dask.distributed's preload mechanism in each worker process.

    Ctrl-C reaches every process of the terminal's group: the workers leave it to their parent,
    which stops the run in one line and closes them.
    """
    die_with_parent()
    try:
        signal.signal(signal.SIGINT, signal.SIG_IGN)
    except ValueError:  # not the main thread of the worker process
        pass
