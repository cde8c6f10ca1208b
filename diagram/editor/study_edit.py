"""What the editor does to the study it opened: check, assess, draw, place a click, save, export.

The page holds the study as the plain data of a study file (the file's keys, as JSON). Every
change is validated by the study loader exactly as a file is (so its problems are the command
line's own words), then assessed and drawn by the in-process pipeline. Nothing here reads or
writes a path that came from a request: saving goes to the opened file, or to a bare file name
in the opened file's folder, and exports are handed back to the browser.
"""

from __future__ import annotations

import dataclasses
import math
import threading
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from diagram import anatomy
from diagram._version import __version__
from diagram.errors import DiagramError, ExportError, InputError, Problem, StudyError
from diagram.reading.formats import MAX_BYTES, study_suffixes
from diagram.reading.load import load_prior, load_study, load_study_text
from diagram.reading.study import Study

MAX_BODY = MAX_BYTES + 64 * 1024  # a study file's limit, plus the envelope of a save request
STUDY_SUFFIXES = study_suffixes()
EXPORTS: dict[str, tuple[str, str]] = {  # format: (media type, suffix)
    "svg": ("image/svg+xml", ".svg"),
    "pdf": ("application/pdf", ".pdf"),
    "png": ("image/png", ".png"),
    "dcm": ("application/dicom", ".dcm"),
    "json": ("application/json", ".json"),
}
MIDLINE = "midline"  # the side named for the unpaired aorta on the page
NEW_STUDY: dict[str, Any] = {"format": 1, "exam": {"criteria": "native"}}


class SaveConflict(DiagramError):
    """Saving would replace a file other than the one opened; the user has to confirm."""

    exit_code = 2


@dataclass
class EditedStudy:
    """The study file being edited: where it lives, and the earlier exam it named when opened.

    ``path`` is None for a new study until it is first saved. ``prior`` is read once, when the
    study is opened; a ``prior`` typed on the page is kept in the file but never read. ``text``
    is what Save changes: only the values edited on the page are rewritten in it.
    """

    path: Path | None
    folder: Path
    prior: Study | None = None
    template: str | Path | None = None
    page: str = "a4"
    suggested: str = "new-study.yaml"  # the name a first save proposes when ``path`` is None
    data: dict[str, Any] = field(default_factory=dict)  # as file data, as opened or last saved
    text: str | None = None  # the file's own text, as opened or last saved (None: no file yet)
    lock: threading.Lock = field(default_factory=threading.Lock, repr=False)

    @property
    def name(self) -> str:
        """Return the name messages use for the study (its file name, or "new study")."""
        return self.path.name if self.path is not None else self.suggested


def open_study(path: Path | None) -> EditedStudy:
    """Open a study file (or start a new study when ``path`` is None or names no file yet).

    A file with problems raises its StudyError: the command line reports it as ``check`` would.
    """
    from diagram.reading.plain import study_data

    if path is None:
        return EditedStudy(None, Path.cwd(), data=dict(NEW_STUDY))
    path = path.resolve()
    if not path.exists():
        if path.suffix.lower() not in STUDY_SUFFIXES:
            rule = "names no file; a new study file ends in .yaml, .yml or .json."
            raise StudyError([Problem(str(path), None, "", None, rule)])
        return EditedStudy(path, path.parent, data=dict(NEW_STUDY))
    raw = path.read_bytes()
    study = load_study(path)  # a study file, or the scanner's structured report
    data = study_data(study)
    if path.suffix.lower() in STUDY_SUFFIXES and not _is_dicom(path):
        text = raw.decode("utf-8")  # the loader has read it as UTF-8 text
        return EditedStudy(path, path.parent, prior=load_prior(study), data=data, text=text)
    # a structured report is never written over: its study is saved as a study file beside it
    return EditedStudy(None, path.parent, suggested=f"{path.stem}.yaml", data=data)


def _is_dicom(path: Path) -> bool:
    from diagram.reading import sr

    with open(path, "rb") as handle:
        return sr.looks_like_dicom(handle.read(132))


def check_body(body: bytes, name: str) -> Study:
    """Validate a study posted as JSON with the study loader; raise StudyError with its problems."""
    try:
        text = body.decode("utf-8")
    except UnicodeDecodeError as err:
        rule = f"is not UTF-8 text (byte 0x{body[err.start]:02x})."
        raise StudyError([Problem(name, None, "", None, rule)]) from None
    return load_study_text(text, name, ".json")


def problems_data(err: DiagramError, name: str) -> list[dict[str, Any]]:
    """Return the problems of an error as the page shows them: field, and the command line's line.

    Line numbers are dropped: they would count lines of the request, not of the file.
    """
    if not isinstance(err, InputError):
        return [{"field": "", "message": _one_line(line)} for line in err.lines()]
    out = []
    for p in err.problems:
        shown = dataclasses.replace(p, file=name, line=None)
        message = _one_line(str(shown))
        out.append({"field": p.field, "rule": p.rule, "hint": p.hint, "message": message})
    return out


def _one_line(line: str) -> str:
    """Escape control characters as the command line does, so a message stays one line."""
    if line.isprintable():
        return line
    return "".join(ch if ch.isprintable() else ascii(ch)[1:-1] for ch in line)


def _inputs(study: Study, edited: EditedStudy) -> dict[str, Any]:
    """Return the criteria sets of the study and of its prior, read at the edge, as keywords."""
    from diagram.inputs import study_criteria

    prior = edited.prior
    return {
        "criteria": study_criteria(study),
        "prior": prior,
        "prior_criteria": study_criteria(prior) if prior is not None else None,
    }


def results(study: Study, edited: EditedStudy) -> dict[str, Any]:
    """Return the results document of the study (as ``check --json`` prints it)."""
    from diagram.assess import assess
    from diagram.output.results import results_document

    return results_document(assess(study, **_inputs(study, edited)), version=__version__)


def vessel_hooks(template: Any) -> dict[str, dict[str, str]]:
    """Return, by scene item id, the ``data-side``/``data-segment`` of each drawn vessel."""
    from diagram.drawing.scene import make_id

    hooks: dict[str, dict[str, str]] = {}
    for key, vessel in template.vessels.items():
        marks = {"data-side": vessel.side or MIDLINE, "data-segment": vessel.segment}
        hooks[make_id("vessel", key)] = marks
        hooks[make_id("label", key)] = marks
    return hooks


def preview(study: Study, edited: EditedStudy) -> dict[str, Any]:
    """Draw the study with the pipeline; return page 1 as SVG with hooks, the results, the map box.

    The same call as ``draw`` (assess, layout), rendered with each vessel marked for the page.
    """
    from diagram.drawing.template.mapfile import load_template
    from diagram.output.svg import render_svg
    from diagram.pipeline import draw

    template = load_template(edited.template)
    drawing = draw(study, page=edited.page, template=template, **_inputs(study, edited))
    assert drawing.scene is not None  # the pipeline hands over the Scene
    hooks = vessel_hooks(template)
    svg = render_svg(drawing.scene, annotate=lambda item: hooks.get(item.id))
    box = drawing.scene.map_box
    return {
        "svg": svg[svg.index("<svg") :],  # inline in the page: no XML declaration
        "results": drawing.results,
        "map_box": [box.x, box.y, box.w, box.h],
    }


def locate(
    edited: EditedStudy, side: str, segment: str, point: tuple[float, float], box: list[float]
) -> float:
    """Return how far into ``segment`` (cm, nominal length) the page point ``point`` lies.

    ``box`` is the map box the page was drawn with (page points); the click is taken to the
    nearest point of the vessel's centre line, and its arc length scaled to the segment's
    nominal length (as lesion extents are mapped onto the drawing).
    """
    from diagram.drawing.template.mapfile import load_template

    template = load_template(edited.template)
    if segment not in anatomy.SEGMENTS or not template.covers(side, segment):
        raise StudyError(
            [Problem(edited.name, None, "at", repr(segment), "is not drawn on this map.")]
        )
    vessel = template.vessel(side, segment)
    vx, vy, vw, _ = template.viewbox
    scale = box[2] / vw
    x = (point[0] - box[0]) / scale + vx
    y = (point[1] - box[1]) / scale + vy
    geometry = vessel.geometry
    length = geometry.length()
    steps = 200
    best = min(
        range(steps + 1), key=lambda k: _dist2(geometry.point_at(length * k / steps), (x, y))
    )
    lo, hi = max(0.0, length * (best - 1) / steps), min(length, length * (best + 1) / steps)
    for _ in range(30):  # refine by ternary search on the bracketing interval
        a, b = lo + (hi - lo) / 3, hi - (hi - lo) / 3
        if _dist2(geometry.point_at(a), (x, y)) < _dist2(geometry.point_at(b), (x, y)):
            hi = b
        else:
            lo = a
    fraction = (lo + hi) / 2 / length if length > 0 else 0.0
    cm = fraction * anatomy.SEGMENTS[segment].length_cm
    return math.floor(cm * 10 + 0.5) / 10  # a tenth of a centimetre, halves up


def _dist2(p: tuple[float, float], q: tuple[float, float]) -> float:
    return (p[0] - q[0]) ** 2 + (p[1] - q[1]) ** 2


def save_target(edited: EditedStudy, name: str | None, confirm: bool) -> Path:
    """Return where a save goes: the opened file, or ``name`` (a bare file name) beside it.

    Raise SaveConflict, unless the user confirmed, when ``name`` is an existing file other than
    the one opened, or when the opened file was changed on disk since it was read (by a text
    editor: its changes would be lost); an ExportError for a name with a folder or a wrong suffix.
    """
    if name is None or name == "":
        if edited.path is None:
            raise ExportError("a new study needs a file name: use Save as.")
        if not confirm:
            _unchanged_on_disk(edited)
        return edited.path
    if (
        name in (".", "..")
        or "/" in name
        or "\\" in name
        or "\0" in name
        or Path(name).name != name
    ):
        raise ExportError(f"{name!r}: give a file name only; it is saved in {edited.folder}.")
    if Path(name).suffix.lower() not in STUDY_SUFFIXES:
        raise ExportError(f"{name!r}: a study file name ends in .yaml, .yml or .json.")
    target = (edited.folder / name).resolve()
    if target.parent != edited.folder.resolve():
        raise ExportError(f"{name!r}: give a file name only; it is saved in {edited.folder}.")
    if target != edited.path and target.exists() and not confirm:
        raise SaveConflict(f"{name}: a file of that name exists; confirm to replace it.")
    if target == edited.path and not confirm:
        _unchanged_on_disk(edited)
    return target


def _unchanged_on_disk(edited: EditedStudy) -> None:
    """Raise SaveConflict when the opened file was changed by another program since it was read."""
    if edited.path is None or edited.text is None:
        return
    try:
        now = edited.path.read_bytes()
    except FileNotFoundError:
        return  # removed meanwhile: saving writes it again
    except OSError as err:
        raise ExportError(f"{edited.path.name}: cannot be read: {err.strerror}.") from None
    if now != edited.text.encode("utf-8"):
        raise SaveConflict(
            f"{edited.path.name} was changed by another program since it was opened; "
            "confirm to replace it with the study on the page."
        )


def save(study: Study, edited: EditedStudy, target: Path) -> Path:
    """Write the study to ``target`` atomically (YAML, or JSON for a .json name); return it.

    An opened file keeps its own text: only the values changed on the page are rewritten
    (:mod:`diagram.editor.keep`). The text written is read back with the loader before it
    replaces anything, so a saved file always reloads to the study the page showed.
    """
    from diagram.output.export import write_atomic
    from diagram.reading.plain import study_data

    data = study_data(study)
    text = file_text(edited, data, target.suffix.lower() == ".json")
    again = load_study_text(text, target.name, target.suffix)
    if study_data(again) != data:  # a defect in the writer, never the user's
        raise ExportError(
            f"{target.name}: the saved text would not read back the same; nothing written."
        )
    write_atomic(target, text.encode("utf-8"))
    edited.data = data
    edited.text = text
    edited.path = target
    edited.folder = target.parent
    return target


def file_text(edited: EditedStudy, data: dict[str, Any], json_file: bool) -> str:
    """Return the text of the study file for ``data``.

    The opened file's own text with the changes made in it when there is one of the same kind
    (YAML or JSON); otherwise the study written out afresh (a new study, a structured report's,
    or a YAML study saved as JSON and the other way round).
    """
    import json

    from diagram.editor import keep
    from diagram.reading.plain import dump_study, study_data

    def reads_back(text: str) -> bool:
        try:
            again = load_study_text(text, opened.name if opened else "study", suffix)
        except StudyError:
            return False
        return study_data(again) == data

    suffix = ".json" if json_file else ".yaml"
    opened = edited.path
    same_kind = opened is not None and (opened.suffix.lower() == ".json") == json_file
    if edited.text is not None and opened is not None and same_kind:
        try:
            return keep.kept_text(edited.text, json_file, edited.data, data, reads_back)
        except ValueError as err:  # the file no longer matches the study opened
            raise ExportError(
                f"{opened.name}: its own text could not be kept ({err}); nothing written."
            ) from None
    if json_file:
        return json.dumps(data, indent=2, ensure_ascii=False) + "\n"
    return dump_study(data)


def export_bytes(study: Study, edited: EditedStudy, fmt: str) -> bytes:
    """Return the study drawn in one export format, through the same writers as ``draw``."""
    from diagram.drawing.template.mapfile import load_template
    from diagram.output.export import render_bytes
    from diagram.pipeline import draw

    template = load_template(edited.template)
    drawing = draw(study, page=edited.page, template=template, **_inputs(study, edited))
    return render_bytes(drawing, fmt)


def scan_order(template: Any) -> list[dict[str, str]]:
    """Return the segments the map draws in scan order: aorta to foot, right leg then left."""
    order = []
    for side in ("right", "left"):
        for segment in anatomy.SEGMENT_IDS:
            if segment in anatomy.UNPAIRED:
                if side == "right" and template.covers(None, segment):
                    order.append(
                        {
                            "side": MIDLINE,
                            "segment": segment,
                            "name": anatomy.SEGMENTS[segment].name,
                        }
                    )
                continue
            if template.covers(side, segment):
                order.append(
                    {"side": side, "segment": segment, "name": anatomy.SEGMENTS[segment].name}
                )
    return order
