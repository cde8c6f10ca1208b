"""Many teaching cases at once: worker processes and what each case reports back.

Case ids are drawn in the parent (:mod:`diagram.cli.teach`), so that they are unique in the
batch and in the output folder; each worker de-identifies, draws, scans and writes one study and
returns a small status holding no identifier (:class:`TeachResult`), plus the free texts kept
for review when they are kept. Messages are quiet: they name the input by its place in the batch
and never echo a value of the study (not its file name, keys, anchors or segment names); the
records (audit, link file, review list) are in :mod:`diagram.teaching.records`.
"""

from __future__ import annotations

import re
import signal
from collections.abc import Callable, Iterator
from concurrent.futures import FIRST_COMPLETED, Future, ProcessPoolExecutor, wait
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import Any

from diagram.errors import DiagramError


@dataclass(frozen=True)
class TeachSettings:
    """What every case of a batch is made with (picklable)."""

    out_dir: Path
    formats: tuple[str, ...]
    keep_year: bool = True
    keep_text: bool = False
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
    texts: tuple[tuple[str, str], ...] = ()  # (field, text) kept for the review list
    withheld: int = 0  # free texts withheld

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
            "free_text": {"withheld": self.withheld, "kept_for_review": len(self.texts)},
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


_QUOTED = re.compile(r"'[^']*'|\"[^\"]*\"|\([&*!][^)]*\)")
_SAFE_HINT = re.compile(r"did you mean [A-Za-z0-9 _-]+\?|[^'\"0-9&*!]*")


def _vocabulary() -> frozenset[str]:
    """Return the words a field path may show: the schema's keys and the segment ids."""
    from diagram import anatomy
    from diagram.reading.checks import study_schema
    from diagram.reading.study import GRAFT_SITES

    keys: set[str] = set()

    def walk(node: object) -> None:
        if isinstance(node, dict):
            keys.update(str(k) for k in node.get("properties", {}))
            for value in node.values():
                walk(value)
        elif isinstance(node, list):
            for value in node:
                walk(value)

    walk(study_schema())
    return frozenset(keys | set(anatomy.SEGMENT_IDS) | set(GRAFT_SITES))


def quiet_lines(n: int, exc: DiagramError) -> tuple[str, ...]:
    """Return a tool error's lines as a teaching run prints them: no value of the study.

    The input is named by its place in the batch, not its file name; a field path shows only
    the study format's own keys and segment ids; quoted text, anchors and tags are left out
    of the rule; a hint is kept only when it quotes nothing.
    """
    from diagram.errors import InputError

    if not isinstance(exc, InputError):
        return tuple(f"input {n}: {_QUOTED.sub('…', line)}" for line in exc.lines())
    known = _vocabulary()
    out = []
    for p in exc.problems:
        parts = re.split(r"(\.|\[\d+\])", p.field) if p.field else []
        field = "".join(
            x if not x or x == "." or x.startswith("[") or x in known else "(key)" for x in parts
        )
        where = f"input {n}" + (f": line {p.line}" if p.line is not None else "")
        hint = f" ({p.hint})" if p.hint and _SAFE_HINT.fullmatch(p.hint) else ""
        out.append(f"{where}: {field or '(file)'}: {_QUOTED.sub('…', p.rule)}{hint}")
    return tuple(out)


def teach_one(task: TeachTask) -> TeachResult:
    """Export one study as a teaching case into the output folder; never raises a tool error."""
    from diagram.reading.load import load_study
    from diagram.teaching.case import CaseSettings, render_case, write_case
    from diagram.teaching.clean import CleanError

    cfg = task.settings
    base = TeachResult(task.n, task.case_id, task.study)
    try:
        study = load_study(task.study)
        outputs = render_case(
            study,
            task.case_id,
            CaseSettings(
                formats=cfg.formats,
                keep_year=cfg.keep_year,
                keep_text=cfg.keep_text,
                page=cfg.page,
                template=cfg.template,
                png_dpi=cfg.png_dpi,
            ),
        )
        case = outputs.case
        base = replace(
            base,
            removed=tuple(str(c) for c in case.removed),
            scrubs=tuple((str(c), n) for c, n in case.scrubs.items()),
            withheld=case.withheld,
        )
        if outputs.hits:
            return replace(
                base,
                refused=tuple((str(h.category), h.output) for h in outputs.hits),
                errors=tuple(
                    f"input {task.n}: not written: {h.category} found in the {h.output} output."
                    for h in outputs.hits
                ),
            )
        written = write_case(outputs, cfg.out_dir)
        return replace(base, written=tuple(p.name for p in written), texts=case.texts)
    except CleanError as exc:
        line = f"input {task.n}: not written: the {exc.output} output: {exc.detail}."
        return replace(base, refused=((str(exc.category), exc.output),), errors=(line,))
    except DiagramError as exc:
        return replace(base, errors=quiet_lines(task.n, exc))


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
