"""Many studies at once: expand the inputs, draw each in a worker process, report a summary.

Studies are streamed: at most a few tasks per worker are in flight and a worker returns only a
small status, so the parent's memory does not grow with the number of studies. Each study's
outputs are rendered in memory first and written only when all of them succeeded, each through
a temporary file and a rename, so a failed study leaves nothing in the output folder.
"""

from __future__ import annotations

import contextlib
import os
import signal
import sys
from collections import deque
from collections.abc import Callable
from concurrent.futures import (
    FIRST_COMPLETED,
    CancelledError,
    Future,
    ProcessPoolExecutor,
    wait,
)
from concurrent.futures.process import BrokenProcessPool
from dataclasses import dataclass, field
from pathlib import Path
from types import FrameType
from typing import TYPE_CHECKING, Any, Protocol

from diagram.batch.names import DEFAULT_NAME, Unnamed, plan_names
from diagram.errors import DiagramError, ExportError

if TYPE_CHECKING:
    from diagram.drawing.labprofile import LabProfile
    from diagram.output.export import Renderer


@dataclass(frozen=True)
class BatchSettings:
    """What every study of a batch is drawn with (picklable)."""

    out_dir: Path
    formats: tuple[str, ...] = ("pdf",)
    name_pattern: str = DEFAULT_NAME
    page: str = "a4"
    template: Path | None = None
    criteria: str | None = None
    target: str | None = None
    lab: LabProfile | None = None
    png_dpi: float = 150.0
    overwrite: bool = False
    renderer: Renderer = "cairo"


@dataclass(frozen=True)
class BatchTask:
    """One study to draw: its place in the batch, its file and its output name (no suffix)."""

    n: int
    study: Path
    stem: str
    settings: BatchSettings


@dataclass(frozen=True)
class BatchResult:
    """What became of one study."""

    n: int
    study: str
    written: tuple[str, ...] = ()
    errors: tuple[str, ...] = ()

    @property
    def ok(self) -> bool:
        """Return True when every output of the study was written."""
        return not self.errors


@dataclass
class BatchSummary:
    """Counts of a finished (or interrupted) batch."""

    done: int = 0
    failed: int = 0
    interrupted: bool = False
    failures: list[BatchResult] = field(default_factory=list)
    signal: int | None = None  # the signal that stopped the batch (SIGINT for Ctrl-C)

    def line(self, total: int) -> str:
        """Return the closing line of the batch."""
        head = f"{self.done} of {total} studies drawn, {self.failed} failed"
        if self.interrupted:
            name = signal.Signals(self.signal or signal.SIGINT).name
            head += f", {total - self.done - self.failed} not drawn (interrupted by {name})"
        return head + "."

    @property
    def exit_status(self) -> int:
        """Return the command's exit status: 128 + the signal when stopped, 2 after a failure."""
        if self.interrupted:
            return 128 + (self.signal or signal.SIGINT)
        return 2 if self.failed else 0


def draw_one(task: BatchTask) -> BatchResult:
    """Draw one study into the output folder; never raises for a tool error.

    Every output is rendered in memory before the first is written. Without ``overwrite`` each
    file is created exclusively: a name taken meanwhile (by another process) fails the study and
    the file there is left as it was. If writing one of them fails or is interrupted, the ones
    this call already wrote are removed again, so a study leaves all its files or none (a file it
    replaced under ``--overwrite`` cannot be brought back).
    """
    from diagram.inputs import draw_inputs, load_inputs, load_template_for
    from diagram.output.export import ExportOptions, render_bytes, suffix_for, write_all
    from diagram.reading.load import load_study

    cfg = task.settings
    try:
        study = load_study(task.study)
        targets = [cfg.out_dir / f"{task.stem}.{suffix_for(fmt)}" for fmt in cfg.formats]
        inputs = load_inputs(study, criteria=cfg.criteria)
        template = load_template_for(cfg.template, cfg.lab)
        drawing = draw_inputs(inputs, template, page=cfg.page, target=cfg.target, lab=cfg.lab)
        options = ExportOptions(png_dpi=cfg.png_dpi, renderer=cfg.renderer)
        blobs = [render_bytes(drawing, fmt, options) for fmt in cfg.formats]
        write_all(list(zip(targets, blobs, strict=True)), overwrite=cfg.overwrite)
        return BatchResult(task.n, str(task.study), written=tuple(str(t) for t in targets))
    except DiagramError as exc:
        return BatchResult(task.n, str(task.study), errors=tuple(exc.lines()))


def draw_batch(
    paths: list[Path],
    settings: BatchSettings,
    *,
    jobs: int,
    on_result: Callable[[BatchResult], None],
    cluster: Cluster | None = None,
) -> BatchSummary:
    """Draw every study of ``paths`` into ``settings.out_dir``, keeping its manifest.

    Every output name is decided first; a clash, or an existing file without ``overwrite``,
    refuses the whole batch before anything is made (``OutputNameError``). The manifest is
    written before the first study is drawn and again at the end, whatever ended the batch.
    With a ``cluster`` its workers draw the studies (``jobs`` is then not used), after they
    have shown that they see the output folder.
    """
    from diagram.batch.manifest import Manifest, read_manifest
    from diagram.output.export import held_signals

    out_dir = settings.out_dir
    named, unnamed = plan_names(
        paths, settings.name_pattern, settings.formats, out_dir, overwrite=settings.overwrite
    )
    earlier = read_manifest(out_dir, overwrite=settings.overwrite) if out_dir.is_dir() else []
    _make_folder(out_dir)
    if cluster is not None:
        cluster.check_folder(out_dir)
    manifest = Manifest(out_dir, named, settings.formats, earlier)
    for item in unnamed:
        manifest.fail(item)
    manifest.write("running")

    def record(result: BatchResult) -> None:
        manifest.note(result.n, result.study, result.errors)
        on_result(result)

    for item in unnamed:
        on_result(_unnamed_result(item))
    tasks = [BatchTask(i.n, i.study, i.stem, settings) for i in named]
    summary = run_batch(tasks, jobs=jobs, on_result=record, workers=cluster)
    summary.failed += len(unnamed)
    summary.failures[:0] = [_unnamed_result(item) for item in unnamed]
    if summary.interrupted:
        status = f"interrupted by {signal.Signals(summary.signal or signal.SIGINT).name}"
    else:
        status = "finished"
    with held_signals():
        manifest.write(status)
    return summary


def _unnamed_result(item: Unnamed) -> BatchResult:
    return BatchResult(item.n, str(item.study), errors=item.errors)


def _make_folder(out_dir: Path) -> None:
    try:
        out_dir.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise ExportError(f"{out_dir}: cannot be made a folder: {exc.strerror}.") from None
    if not out_dir.is_dir():
        raise ExportError(f"{out_dir}: is not a folder.")


def run_batch(
    tasks: list[BatchTask],
    *,
    jobs: int,
    on_result: Callable[[BatchResult], None],
    workers: Workers | None = None,
) -> BatchSummary:
    """Draw every task with ``jobs`` worker processes (in this process when 1), or ``workers``.

    A KeyboardInterrupt (Ctrl-C, or a stop signal the command line turns into one, carrying the
    signal number as ``signum``) ends the batch cleanly: no study is started after it but those
    already handed to workers (two per worker at most, for up to ``DRAIN_SECONDS`` before the
    workers are stopped), a study in progress is finished or leaves no file, and the summary
    says what was done.
    """
    summary = BatchSummary()

    def record(result: BatchResult) -> None:
        if result.ok:
            summary.done += 1
        else:
            summary.failed += 1
            summary.failures.append(result)
        on_result(result)

    try:
        if workers is not None:
            _feed(workers, deque(tasks), record)
        elif jobs <= 1:
            from diagram.output.export import held_signals

            for task in tasks:  # like a worker: a study is drawn whole, or not started
                with held_signals():
                    record(draw_one(task))
        else:
            todo = deque(tasks)
            while todo:  # a new pool after one broke (a worker killed, say for memory)
                _pool_round(todo, jobs, record)
    except KeyboardInterrupt as exc:
        summary.interrupted = True
        summary.signal = getattr(exc, "signum", signal.SIGINT)
    return summary


DRAIN_SECONDS = 5.0  # after an interrupt, how long studies in progress may take to finish
_BROKEN = (
    "(file): outcome unknown: a worker process stopped unexpectedly (killed, or out of memory?) "
    "while this study was in its hands; any output it left is complete; draw it again with "
    "--overwrite to be sure."
)


_STOPPED = (
    "(file): outcome unknown: its worker process was stopped by the interrupt before it "
    "reported; any output it left is complete; draw it again with --overwrite to be sure."
)


def _worker_init() -> None:
    """Set a worker's signals: Ctrl-C is the parent's to handle; SIGTERM ends it quietly."""
    signal.signal(signal.SIGINT, signal.SIG_IGN)
    signal.signal(signal.SIGTERM, _worker_exit)


def _worker_exit(signum: int, frame: FrameType | None) -> None:
    """End the worker at once: it holds no partial file here (see ``_work``), and no traceback."""
    os._exit(128 + signum)


def _work(task: BatchTask) -> BatchResult:
    """Draw one study in a worker process, deferring SIGTERM until the study is done.

    An exception raised by a signal handler in the middle of a drawing could land inside a
    C callback (cairo's writer), which would print it and carry on; blocking SIGTERM instead
    lets the study finish or fail whole, and the worker exits as the signal is unblocked.
    """
    if not hasattr(signal, "pthread_sigmask"):  # no POSIX signal masks (Windows)
        return draw_one(task)
    signal.pthread_sigmask(signal.SIG_BLOCK, {signal.SIGTERM})
    try:
        return draw_one(task)
    finally:
        signal.pthread_sigmask(signal.SIG_UNBLOCK, {signal.SIGTERM})


class _StopFlag:
    """While the pool is fed, turn SIGINT/SIGTERM into a flag checked at safe points.

    A signal handler that raises could land between handing a study to the pool and noting it
    (or between a study's result and its count), and the summary would then miss a study whose
    files are there. The flag is read where the bookkeeping is whole; the previous handlers are
    restored afterwards. Outside the main thread, where handlers cannot be set, it does nothing.
    """

    def __init__(self) -> None:
        self.signum: int | None = None
        self._previous: dict[int, Any] = {}

    def __enter__(self) -> _StopFlag:
        with contextlib.suppress(ValueError):  # not the main thread
            for signum in (signal.SIGINT, signal.SIGTERM):
                self._previous[signum] = signal.signal(signum, self._note)
        return self

    def _note(self, signum: int, frame: FrameType | None) -> None:
        self.signum = self.signum or signum

    def __exit__(self, *exc: object) -> None:
        for signum, handler in self._previous.items():
            signal.signal(signum, handler)

    def interrupt(self) -> KeyboardInterrupt:
        """Return the interrupt to raise, carrying the signal number as ``signum``."""
        stop = KeyboardInterrupt()
        stop.signum = self.signum  # type: ignore[attr-defined]
        return stop


_POLL_SECONDS = 0.2  # how often a waiting batch looks at the stop flag


class Workers(Protocol):
    """Where a batch's studies are drawn: this machine's worker processes, or a cluster's.

    Both hand each study to :func:`draw_one` and give back ``concurrent.futures`` futures, so
    one loop (:func:`_feed`) keeps the studies in flight, counts every result and stops them.
    """

    @property
    def slots(self) -> int:
        """Return how many studies may be in the workers' hands at once."""
        ...

    def submit(self, task: BatchTask) -> Future[BatchResult]:
        """Hand one study to a worker."""
        ...

    def lost(self, task: BatchTask, exc: BaseException) -> str | None:
        """Return the error line when ``exc`` means the study's worker was lost, else None."""
        ...

    def halt(self, late: set[Future[BatchResult]]) -> set[Future[BatchResult]]:
        """Stop the studies still running after an interrupt; return those that finished."""
        ...


class Cluster(Workers, Protocol):
    """Workers on other machines, which must see the output folder at the same path."""

    def check_folder(self, out_dir: Path) -> None:
        """Refuse the batch (``ExportError``) when a worker cannot write into ``out_dir``."""
        ...


def _pool_round(todo: deque[BatchTask], jobs: int, record: Callable[[BatchResult], None]) -> None:
    """Draw tasks from ``todo`` in one pool of ``jobs`` processes, until done or the pool broke.

    A broken pool's studies in flight are recorded as failed with an unknown outcome (a worker
    may have written a study's files just before another died), and the caller starts a new
    pool for the rest.
    """
    with ProcessPoolExecutor(max_workers=jobs, initializer=_worker_init) as pool:
        _feed(_LocalPool(pool, jobs), todo, record)


class _LocalPool:
    """This machine's worker processes (:class:`Workers`)."""

    def __init__(self, pool: ProcessPoolExecutor, jobs: int) -> None:
        self.pool = pool
        self.slots = jobs * 2

    def submit(self, task: BatchTask) -> Future[BatchResult]:
        return self.pool.submit(_work, task)

    def lost(self, task: BatchTask, exc: BaseException) -> str | None:
        return f"{task.study}: {_BROKEN}" if isinstance(exc, BrokenProcessPool) else None

    def halt(self, late: set[Future[BatchResult]]) -> set[Future[BatchResult]]:
        """SIGTERM to the workers (each finishes or drops its study whole), then SIGKILL.

        The studies are not cancelled: on Python 3.11 a cancel can race the pool's own
        clean-up when its workers were signalled too, which then fails in the pool's thread.
        """
        # Python 3.11 has no public way to stop a pool's workers; these are its processes.
        workers = list((self.pool._processes or {}).values())
        done: set[Future[BatchResult]] = set()
        for hard in (False, True):
            if not late:
                break
            for process in workers:
                with contextlib.suppress(OSError):
                    process.kill() if hard else process.terminate()
            finished, late = wait(late, timeout=DRAIN_SECONDS)
            done |= finished
        return done


def _feed(workers: Workers, todo: deque[BatchTask], record: Callable[[BatchResult], None]) -> None:
    """Draw tasks from ``todo`` with ``workers``, keeping at most ``workers.slots`` in flight.

    Returns when ``todo`` is empty, or early when a local pool broke. A stop signal is noted
    and acted on between steps, so every study handed to the workers is accounted for.
    """
    pending: dict[Future[BatchResult], BatchTask] = {}
    with _StopFlag() as stop:
        try:
            broken = False
            while ((todo and not broken) or pending) and stop.signum is None:
                while todo and not broken and len(pending) < workers.slots:
                    try:
                        pending[workers.submit(todo[0])] = todo[0]
                        todo.popleft()
                    except BrokenProcessPool:
                        broken = True
                finished, _ = wait(pending, timeout=_POLL_SECONDS, return_when=FIRST_COMPLETED)
                for future in finished:
                    task = pending.pop(future)
                    exc = _CANCELLED if future.cancelled() else future.exception()
                    line = workers.lost(task, exc) if exc is not None else None
                    if line is not None:
                        broken = broken or isinstance(exc, BrokenProcessPool)
                        record(BatchResult(task.n, str(task.study), errors=(line,)))
                    else:
                        record(future.result())
            if stop.signum is not None:
                raise stop.interrupt()
        except KeyboardInterrupt:
            _drain(workers, pending, record)
            raise


_CANCELLED = CancelledError()  # what a cancelled study is reported to ``Workers.lost`` as


def _drain(
    workers: Workers,
    pending: dict[Future[BatchResult], BatchTask],
    record: Callable[[BatchResult], None],
) -> None:
    """After an interrupt: hand out nothing more and let the workers finish what they hold.

    They hold at most ``workers.slots`` studies. Those still running after ``DRAIN_SECONDS``
    are stopped (``workers.halt``). Every study handed out is recorded: drawn or failed from
    its result, or failed with an unknown outcome when its worker did not report, so that the
    summary never counts as not drawn a study whose files are there.
    """
    done, late = wait(pending, timeout=DRAIN_SECONDS)
    if late:
        done |= workers.halt(late)
    for future, task in pending.items():
        if future in done and not future.cancelled() and future.exception() is None:
            record(future.result())  # a study that failed normally is reported too
        else:  # its worker was stopped, or died with the signal, before it reported
            line = workers.lost(task, _CANCELLED) or f"{task.study}: {_STOPPED}"
            record(BatchResult(task.n, str(task.study), errors=(line,)))


def default_jobs() -> int:
    """Return the number of worker processes to use by default: the usable CPU count."""
    try:
        return max(1, len(os.sched_getaffinity(0)))
    except AttributeError:  # not on every platform
        return max(1, os.cpu_count() or 1)


def show_progress(quiet: bool) -> bool:
    """Return True when a progress bar should be drawn (a terminal, and not --quiet)."""
    return not quiet and sys.stderr.isatty()
