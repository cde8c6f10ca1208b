"""A batch drawn by the workers of an existing Dask cluster (the optional ``dask`` extra).

The studies, their names, the manifest and the failure accounting are the local batch's
(:func:`diagram.batch.run.draw_batch`); only the executor differs. Each study is handed to
:func:`diagram.batch.run.draw_one` on a worker through the client's ``concurrent.futures``
executor, and the worker writes its files straight into the output folder, create-exclusive as
a local worker does. The workers must therefore see the study files and the output folder at the
same paths as this machine (a shared file system): paths are made absolute before they are sent,
and the workers are asked first whether they can write into the output folder.

``dask.distributed`` is imported only here, and only when a batch is given ``--scheduler``.
"""

from __future__ import annotations

import contextlib
import os
import tempfile
import time
from collections.abc import Iterator
from concurrent.futures import CancelledError, Future
from dataclasses import replace
from pathlib import Path
from typing import TYPE_CHECKING

from diagram._version import __version__
from diagram.batch.run import BatchResult, BatchSettings, BatchTask, draw_one
from diagram.errors import ExportError

if TYPE_CHECKING:
    from distributed import Client

INSTALL = "pip install 'limbchart[dask]'"
CONNECT_SECONDS = 10.0  # how long to try to reach the scheduler before giving up
SLOTS_PER_THREAD = 2  # studies in a worker thread's hands at once (as in the local pool)
RECOUNT_SECONDS = 5.0  # how often the cluster's thread count is read again (workers come and go)
_LOST = (
    "(file): outcome unknown: the worker drawing it was lost (killed, out of memory, or cut off "
    "from the scheduler); any output it left is complete; draw it again with --overwrite to be "
    "sure."
)
_CANCELLED = (
    "(file): outcome unknown: cancelled by the interrupt before its worker reported; a worker "
    "may still finish it, and any output it leaves is complete; draw it again with --overwrite "
    "to be sure."
)


class ClusterError(ExportError):
    """The cluster cannot be used: the extra is missing, or the scheduler or workers fail."""

    def __init__(self, *lines: str) -> None:
        self.problem_lines = lines
        super().__init__("\n".join(lines))

    def lines(self) -> list[str]:
        return list(self.problem_lines)


def _client_class() -> type[Client]:
    """Return ``distributed.Client``, or refuse in one line saying how to install it."""
    try:
        from distributed import Client
    except ImportError:
        raise ClusterError(
            f"--scheduler: drawing on a Dask cluster needs the optional dask extra, which is "
            f"not installed here; install it with: {INSTALL}"
        ) from None
    found: type[Client] = Client
    return found


@contextlib.contextmanager
def connect(address: str) -> Iterator[DaskWorkers]:
    """Connect to the scheduler at ``address`` for the time of a batch, then disconnect.

    An address that does not answer within ``CONNECT_SECONDS`` is refused in one line, as is
    a cluster with no workers (a batch on it would wait for ever).
    """
    client_class = _client_class()
    from distributed.comm.addressing import get_address_host_port

    try:  # before a client is made: one made for a malformed address hangs on at exit
        get_address_host_port(address)
    except ValueError as exc:
        raise ClusterError(
            f"--scheduler {address}: is not a scheduler's address ({_reason(exc)}); give "
            "one like tcp://host:8786."
        ) from None
    try:
        client = client_class(address, timeout=CONNECT_SECONDS, set_as_default=False)
    except OSError as exc:  # distributed reports its connect timeout as an OSError
        why = "" if "timed out" in str(exc).lower() else f" ({_reason(exc)})"
        raise ClusterError(
            f"--scheduler {address}: no Dask scheduler answered within {CONNECT_SECONDS:g} s"
            f"{why}; check the address and that the scheduler is running."
        ) from None
    try:
        workers = DaskWorkers(client, address)
        if workers.threads() == 0:
            raise ClusterError(
                f"--scheduler {address}: the cluster has no workers; start some "
                "(dask worker ADDRESS) and draw again."
            )
        yield workers
    finally:
        with contextlib.suppress(Exception):  # a scheduler gone meanwhile: nothing to close
            client.close(timeout=CONNECT_SECONDS)


def _reason(exc: BaseException) -> str:
    text = " ".join(str(exc).split()) or type(exc).__name__
    return text if len(text) <= 160 else text[:157] + "..."


class DaskWorkers:
    """A Dask cluster's workers as the batch's :class:`diagram.batch.run.Cluster`."""

    def __init__(self, client: Client, address: str) -> None:
        self.client = client
        self.address = address
        self.executor = client.get_executor(pure=False)  # every study drawn, none reused
        self._slots = 0
        self._counted_at = -RECOUNT_SECONDS

    def threads(self) -> int:
        """Return the number of worker threads the cluster has now."""
        return sum(self.client.nthreads().values())

    @property
    def slots(self) -> int:
        now = time.monotonic()
        if now - self._counted_at >= RECOUNT_SECONDS:
            self._slots = max(1, self.threads()) * SLOTS_PER_THREAD
            self._counted_at = now
        return self._slots

    def submit(self, task: BatchTask) -> Future[BatchResult]:
        sent = replace(task, study=Path(os.path.abspath(task.study)), settings=_absolute(task))
        future: Future[BatchResult] = self.executor.submit(draw_one, sent)
        return future

    def lost(self, task: BatchTask, exc: BaseException) -> str | None:
        from distributed.scheduler import KilledWorker

        study = os.path.abspath(task.study)
        if isinstance(exc, CancelledError):
            return f"{study}: {_CANCELLED}"
        if isinstance(exc, KilledWorker | OSError):  # a worker died, or the scheduler is gone
            return f"{study}: {_LOST}"
        return None

    def halt(self, late: set[Future[BatchResult]]) -> set[Future[BatchResult]]:
        """Cancel the studies still in the cluster's hands (a running one may still finish)."""
        for future in late:
            future.cancel()
        return set()

    def check_folder(self, out_dir: Path) -> None:
        """Ask every worker whether it runs this limbchart and can write into ``out_dir``."""
        try:
            answers: dict[str, str | None] = self.client.run(
                worker_view, os.path.abspath(out_dir), __version__
            )
        except Exception as exc:  # a worker without limbchart cannot even read the question
            raise ClusterError(
                f"--scheduler {self.address}: the workers could not run limbchart "
                f"({_reason(exc)}); install limbchart {__version__} with the dask extra on "
                "every worker."
            ) from None
        lines = [f"{worker}: {problem}" for worker, problem in sorted(answers.items()) if problem]
        if lines:
            raise ClusterError(*lines, "nothing was drawn.")


def _absolute(task: BatchTask) -> BatchSettings:
    """Return the settings with every local path made absolute, as the workers must see it."""
    from diagram.criteria import shipped_names

    cfg = task.settings
    criteria = cfg.criteria
    if criteria is not None and criteria not in shipped_names() and Path(criteria).exists():
        criteria = os.path.abspath(criteria)
    template = cfg.template
    if template is not None and template.exists():  # else a shipped template's name
        template = Path(os.path.abspath(template))
    return replace(
        cfg, out_dir=Path(os.path.abspath(cfg.out_dir)), criteria=criteria, template=template
    )


def worker_view(out_dir: str, version: str) -> str | None:
    """Run on a worker: return why it cannot draw into ``out_dir``, or None when it can."""
    if version != __version__:
        return (
            f"runs limbchart {__version__}, and this batch was started with {version}; install "
            "the same version on every worker."
        )
    try:
        with tempfile.TemporaryFile(dir=out_dir):
            pass
    except OSError as exc:
        return (
            f"cannot write into the output folder {out_dir} ({exc.strerror}); the workers must "
            "see it at the same path (a shared file system)."
        )
    return None
