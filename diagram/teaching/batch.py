"""Many teaching cases at once: worker processes, the audit file and the optional link file.

Case ids are drawn here, in the parent, so that they are unique in the batch and in the output
folder; each worker de-identifies, draws, scans and writes one study and returns a small status
holding no identifier. The audit (``audit.json`` in the output folder) lists per case what kinds
of identifier were removed and how many free-text scrubs were made, never a value. The link
file (case id ➜ source file) is written only when asked for, and never into the output folder.
"""

from __future__ import annotations

import json
import signal
from collections.abc import Callable, Iterator
from concurrent.futures import FIRST_COMPLETED, Future, ProcessPoolExecutor, wait
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import Any

from diagram.errors import DiagramError

AUDIT_NAME = "audit.json"
AUDIT_FORMAT = 1


@dataclass(frozen=True)
class TeachSettings:
    """What every case of a batch is made with (picklable)."""

    out_dir: Path
    formats: tuple[str, ...]
    keep_year: bool = True
    page: str = "a4"
    template: Path | None = None
    png_dpi: float = 150.0


@dataclass(frozen=True)
class TeachTask:
    """One study to export: its place in the batch, its file and its case id."""

    n: int
    study: Path
    case_id: str
    settings: TeachSettings


@dataclass(frozen=True)
class TeachResult:
    """What became of one study; ``errors`` are printable lines that name no identifier."""

    n: int
    case_id: str
    source: Path  # for the link file only; never printed next to the case id
    written: tuple[str, ...] = ()
    removed: tuple[str, ...] = ()
    scrubs: tuple[tuple[str, int], ...] = ()
    refused: tuple[tuple[str, str], ...] = ()  # (category, output) the scan found
    errors: tuple[str, ...] = ()

    @property
    def ok(self) -> bool:
        """Return True when every output of the case was written."""
        return not self.errors

    def audit_entry(self) -> dict[str, Any]:
        """Return the case's audit record: categories and counts, no values."""
        status = "written" if self.ok else ("refused" if self.refused else "failed")
        return {
            "case_id": self.case_id,
            "status": status,
            "fields_removed": list(self.removed),
            "text_scrubs": dict(self.scrubs),
            "scrubs": sum(n for _, n in self.scrubs),
            "outputs": list(self.written),
            "refused": [{"category": c, "output": o} for c, o in self.refused],
        }


@dataclass
class TeachSummary:
    """Counts of a finished (or interrupted) batch."""

    done: int = 0
    failed: int = 0
    interrupted: bool = False
    results: list[TeachResult] = field(default_factory=list)

    def line(self, total: int) -> str:
        """Return the closing line of the batch."""
        head = f"{self.done} of {total} studies written as teaching cases, {self.failed} failed"
        if self.interrupted:
            head += f", {total - self.done - self.failed} not started (interrupted)"
        return head + "."


def _label(task: TeachTask, study: object | None) -> str:
    """Return how messages name the input: its path, scrubbed of the study's identifiers."""
    from diagram.reading.study import Study
    from diagram.teaching.scrub import identifiers_of, scrub

    text = str(task.study)
    if isinstance(study, Study):
        text = scrub(text, identifiers_of(study))[0]
    return f"input {task.n} ({text})"


def teach_one(task: TeachTask) -> TeachResult:
    """Export one study as a teaching case into the output folder; never raises a tool error."""
    from diagram.reading.load import load_study
    from diagram.teaching.case import render_case, write_case
    from diagram.teaching.clean import CleanError

    cfg = task.settings
    base = TeachResult(task.n, task.case_id, task.study)
    study = None
    try:
        study = load_study(task.study)
        outputs = render_case(
            study,
            task.case_id,
            cfg.formats,
            keep_year=cfg.keep_year,
            page=cfg.page,
            template=cfg.template,
            png_dpi=cfg.png_dpi,
        )
        case = outputs.case
        base = replace(
            base,
            removed=tuple(str(c) for c in case.removed),
            scrubs=tuple((str(c), n) for c, n in case.scrubs.items()),
        )
        if outputs.hits:
            label = _label(task, study)
            return replace(
                base,
                refused=tuple((str(h.category), h.output) for h in outputs.hits),
                errors=tuple(
                    f"{label}: not written: {h.category} found in the {h.output} output."
                    for h in outputs.hits
                ),
            )
        written = write_case(outputs, cfg.out_dir)
        return replace(base, written=tuple(p.name for p in written))
    except CleanError as exc:
        line = f"{_label(task, study)}: not written: the {exc.output} output: {exc.detail}."
        return replace(base, refused=((str(exc.category), exc.output),), errors=(line,))
    except DiagramError as exc:
        if study is None:  # the loader's own messages (they never echo patient values)
            return replace(base, errors=tuple(exc.lines()))
        label = _label(task, study)
        return replace(base, errors=tuple(f"{label}: {line}" for line in exc.lines()))


def _worker_init() -> None:
    signal.signal(signal.SIGINT, signal.SIG_IGN)  # Ctrl-C is the parent's to handle


def _parallel(tasks: list[TeachTask], jobs: int) -> Iterator[TeachResult]:
    """Yield results as workers finish, keeping a few tasks per worker in flight."""
    pending: set[Future[TeachResult]] = set()
    queue = iter(tasks)
    with ProcessPoolExecutor(max_workers=jobs, initializer=_worker_init) as pool:
        try:
            for task in queue:
                pending.add(pool.submit(teach_one, task))
                if len(pending) >= jobs * 2:
                    finished, pending = wait(pending, return_when=FIRST_COMPLETED)
                    yield from (f.result() for f in finished)
            while pending:
                finished, pending = wait(pending, return_when=FIRST_COMPLETED)
                yield from (f.result() for f in finished)
        except KeyboardInterrupt:
            # cases not started are dropped; those in progress finish (their writes are atomic)
            running = [f for f in pending if not f.cancel()]
            done, _ = wait(running)
            yield from (f.result() for f in done if f.exception() is None)
            raise


def run_teach(
    tasks: list[TeachTask], *, jobs: int, on_result: Callable[[TeachResult], None]
) -> TeachSummary:
    """Export every task with ``jobs`` worker processes (in this process when 1)."""
    summary = TeachSummary()

    def record(result: TeachResult) -> None:
        summary.results.append(result)
        if result.ok:
            summary.done += 1
        else:
            summary.failed += 1
        on_result(result)

    try:
        if jobs <= 1:
            for task in tasks:
                record(teach_one(task))
        else:
            for result in _parallel(tasks, jobs):
                record(result)
    except KeyboardInterrupt:
        summary.interrupted = True
    return summary


def read_audit(out_dir: Path) -> list[dict[str, Any]]:
    """Return the cases an earlier run listed in the folder's audit file (none if there is none)."""
    from diagram.errors import ExportError

    path = out_dir / AUDIT_NAME
    if not path.exists():
        return []
    try:
        doc = json.loads(path.read_text("utf-8"))
    except (OSError, UnicodeDecodeError, json.JSONDecodeError):
        doc = None
    if not isinstance(doc, dict) or doc.get("audit_format") != AUDIT_FORMAT:
        raise ExportError(f"{path}: is not a limbchart teaching audit file; not touching it.")
    cases = doc.get("cases")
    return [c for c in cases if isinstance(c, dict)] if isinstance(cases, list) else []


def write_audit(out_dir: Path, earlier: list[dict[str, Any]], results: list[TeachResult]) -> Path:
    """Write the audit file: the earlier runs' cases, then this run's in input order."""
    from diagram._version import __version__
    from diagram.output.export import write_atomic

    doc = {
        "audit_format": AUDIT_FORMAT,
        "tool": f"limbchart {__version__}",
        "note": "categories and counts only: no identifier, no source file, no date",
        "cases": earlier + [r.audit_entry() for r in sorted(results, key=lambda r: r.n)],
    }
    path = out_dir / AUDIT_NAME
    write_atomic(path, (json.dumps(doc, indent=2) + "\n").encode("utf-8"))
    return path


def check_link_target(link: Path, out_dir: Path) -> None:
    """Refuse a link file inside the output folder (it would travel with the cases) or existing."""
    from diagram.errors import ExportError

    target, folder = link.resolve(), out_dir.resolve()
    if target == folder or target.is_relative_to(folder):
        raise ExportError(
            f"{link}: the link file must not be inside the output folder {out_dir}: it would "
            "travel with the teaching cases; keep it apart, inside the hospital."
        )
    if link.exists():
        raise ExportError(f"{link}: exists; a link file is never overwritten, give a new name.")
    if not link.parent.is_dir():
        raise ExportError(f"{link}: the folder {link.parent} does not exist.")


def write_link(link: Path, results: list[TeachResult]) -> Path:
    """Write case id ➜ source file (tab-separated) for the cases written."""
    from diagram.output.export import write_atomic

    rows = ["# case id\tsource study file (keep this file apart from the teaching cases)"]
    rows.extend(
        f"{r.case_id}\t{r.source.resolve()}" for r in sorted(results, key=lambda r: r.n) if r.ok
    )
    write_atomic(link, ("\n".join(rows) + "\n").encode("utf-8"))
    return link
