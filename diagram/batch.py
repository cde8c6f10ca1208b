"""Many studies at once: expand the inputs, draw each in a worker process, report a summary.

Studies are streamed: at most a few tasks per worker are in flight and a worker returns only a
small status, so the parent's memory does not grow with the number of studies. Each study's
outputs are rendered in memory first and written only when all of them succeeded, each through
a temporary file and a rename, so a failed study leaves nothing in the output folder.
"""

from __future__ import annotations

import os
import string
import sys
from collections.abc import Callable, Iterable, Iterator
from concurrent.futures import FIRST_COMPLETED, Future, ProcessPoolExecutor, wait
from dataclasses import dataclass, field
from pathlib import Path

from diagram.errors import DiagramError, Problem, StudyError

STUDY_SUFFIXES = (".yaml", ".yml", ".json")
MANIFEST_SUFFIXES = (".txt", ".list", ".manifest")
DEFAULT_NAME = "map-{n:04d}"
NAME_FIELDS = ("n", "stem", "accession", "patient_id", "exam_date")


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
    png_dpi: float = 150.0
    overwrite: bool = False


@dataclass(frozen=True)
class BatchTask:
    """One study to draw: its place in the batch and its file."""

    n: int
    study: Path
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

    def line(self, total: int) -> str:
        """Return the closing line of the batch."""
        head = f"{self.done} of {total} studies drawn, {self.failed} failed"
        if self.interrupted:
            head += f", {total - self.done - self.failed} not started (interrupted)"
        return head + "."


def expand_inputs(inputs: Iterable[Path]) -> list[Path]:
    """Return the study files named by ``inputs``: files, folders, and manifests of paths."""
    out: list[Path] = []
    problems: list[Problem] = []
    for item in inputs:
        if item.is_dir():
            found = sorted(p for p in item.iterdir() if p.suffix.lower() in STUDY_SUFFIXES)
            if not found:
                problems.append(
                    Problem(str(item), None, "", None, "is a folder with no study files in it.")
                )
            out.extend(found)
        elif item.suffix.lower() in MANIFEST_SUFFIXES and item.is_file():
            for raw in item.read_text("utf-8").splitlines():
                text = raw.strip()
                if not text or text.startswith("#"):
                    continue
                path = Path(text)
                # a missing file is reported with the rest of the batch, not here
                out.append(path if path.is_absolute() else item.parent / path)
        else:
            out.append(item)
    if problems:
        raise StudyError(problems)
    return out


def check_pattern(pattern: str) -> None:
    """Refuse a naming pattern with an unknown field or a folder separator."""
    fields = [f for _, f, _, _ in string.Formatter().parse(pattern) if f is not None]
    unknown = [f for f in fields if f not in NAME_FIELDS]
    if unknown or "/" in pattern or "\\" in pattern or not pattern.strip():
        raise StudyError(
            [
                Problem(
                    "--name",
                    None,
                    "",
                    repr(pattern),
                    f"must be a file name using only the fields {', '.join(NAME_FIELDS)}.",
                )
            ]
        )


def output_stem(task: BatchTask, study: object) -> str:
    """Return the output file name (without suffix) of one study from the naming pattern."""
    from diagram.study import Study

    assert isinstance(study, Study)
    values = {
        "n": task.n,
        "stem": task.study.stem,
        "accession": study.exam.accession or "no-accession",
        "patient_id": study.patient.id or "no-id",
        "exam_date": study.exam.date.isoformat() if study.exam.date else "no-date",
    }
    stem = task.settings.name_pattern.format(**values)
    return "".join(c if c.isalnum() or c in "-_.+" else "_" for c in stem)


def draw_one(task: BatchTask) -> BatchResult:
    """Draw one study into the output folder; never raises for a tool error."""
    from diagram.export import Drawing, ExportOptions, render_bytes, write_atomic
    from diagram.load import load_prior, load_study
    from diagram.pipeline import draw

    cfg = task.settings
    try:
        study = load_study(task.study)
        stem = output_stem(task, study)
        targets = [cfg.out_dir / f"{stem}.{fmt}" for fmt in cfg.formats]
        existing = [t for t in targets if t.exists()]
        if existing and not cfg.overwrite:
            return BatchResult(
                task.n,
                str(task.study),
                errors=tuple(f"{t}: exists; use --overwrite to replace it." for t in existing),
            )
        drawing: Drawing = draw(
            study,
            page=cfg.page,
            template=cfg.template,
            criteria=cfg.criteria,
            target=cfg.target,
            prior=load_prior(study),
        )
        options = ExportOptions(png_dpi=cfg.png_dpi)
        blobs = [render_bytes(drawing, fmt, options) for fmt in cfg.formats]
        for target, blob in zip(targets, blobs, strict=True):
            write_atomic(target, blob)
        return BatchResult(task.n, str(task.study), written=tuple(str(t) for t in targets))
    except DiagramError as exc:
        return BatchResult(task.n, str(task.study), errors=tuple(exc.lines()))


def run_batch(
    tasks: list[BatchTask],
    *,
    jobs: int,
    on_result: Callable[[BatchResult], None],
) -> BatchSummary:
    """Draw every task with ``jobs`` worker processes (in this process when 1)."""
    summary = BatchSummary()

    def record(result: BatchResult) -> None:
        if result.ok:
            summary.done += 1
        else:
            summary.failed += 1
            summary.failures.append(result)
        on_result(result)

    try:
        if jobs <= 1:
            for task in tasks:
                record(draw_one(task))
        else:
            for result in _parallel(tasks, jobs):
                record(result)
    except KeyboardInterrupt:
        summary.interrupted = True
    return summary


def _parallel(tasks: list[BatchTask], jobs: int) -> Iterator[BatchResult]:
    """Yield results as workers finish, keeping only a few tasks per worker in flight."""
    limit = jobs * 2
    pending: set[Future[BatchResult]] = set()
    queue = iter(tasks)
    with ProcessPoolExecutor(max_workers=jobs) as pool:
        try:
            for task in queue:
                pending.add(pool.submit(draw_one, task))
                if len(pending) >= limit:
                    finished, pending = wait(pending, return_when=FIRST_COMPLETED)
                    yield from (f.result() for f in finished)
            while pending:
                finished, pending = wait(pending, return_when=FIRST_COMPLETED)
                yield from (f.result() for f in finished)
        except BaseException:
            for f in pending:
                f.cancel()
            raise


def default_jobs() -> int:
    """Return the number of worker processes to use by default: the usable CPU count."""
    try:
        return max(1, len(os.sched_getaffinity(0)))
    except AttributeError:  # not on every platform
        return max(1, os.cpu_count() or 1)


def show_progress(quiet: bool) -> bool:
    """Return True when a progress bar should be drawn (a terminal, and not --quiet)."""
    return not quiet and sys.stderr.isatty()
