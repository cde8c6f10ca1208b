"""Interrupting a running batch the way a user or a service manager does, for the batch tests."""

from __future__ import annotations

import os
import signal
import subprocess
import time
from pathlib import Path


def interrupt_after_first_map(
    proc: subprocess.Popen[str], out: Path, signum: int, *, whole_group: bool, wait: float
) -> str:
    """Wait for the batch's first map in ``out``, send ``signum`` and return the batch's stderr.

    ``whole_group`` sends it to the process group (Ctrl-C in a terminal reaches every process
    of the group), otherwise to the parent alone (``kill PID``); ``proc`` must have been started
    in a session of its own. A batch that ends before its first map, draws none within ``wait``
    seconds, or hangs after the signal fails the test; a hang is ended with SIGKILL.
    """
    try:
        end = time.monotonic() + wait
        while not (out.is_dir() and any(p.suffix == ".pdf" for p in out.iterdir())):
            assert proc.poll() is None, f"ended before the first map: {proc.communicate()}"
            assert time.monotonic() < end, "no map within the time limit"
            time.sleep(0.02)
        if whole_group:
            os.killpg(proc.pid, signum)
        else:
            os.kill(proc.pid, signum)
        _, err = proc.communicate(timeout=wait)
    finally:
        if proc.poll() is None:  # a hang: end it and fail in the caller
            os.killpg(proc.pid, signal.SIGKILL)
            proc.communicate()
    return err
