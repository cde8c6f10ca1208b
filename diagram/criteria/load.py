"""Find and read criteria sets: the shipped ones by name, a lab's own from its file.

Reading a lab's file is done at the edge (the command line, the batch, :mod:`diagram.inputs`);
the assessment takes the sets as values.
"""

from __future__ import annotations

import difflib
from functools import lru_cache
from importlib import resources
from pathlib import Path

from diagram.criteria.model import Criteria, CriteriaSets
from diagram.criteria.parse import parse_criteria
from diagram.errors import CriteriaError, Problem, StudyError

_MAX_BYTES = 256 * 1024


def shipped_names() -> tuple[str, ...]:
    """Return the names of the criteria sets shipped with the package."""
    folder = resources.files("diagram.criteria")
    return tuple(sorted(p.name[:-5] for p in folder.iterdir() if p.name.endswith(".yaml")))


def load_criteria(name_or_path: str, *, relative_to: Path | None = None) -> Criteria:
    """Return a shipped criteria set by name, or a lab's own set from a file path."""
    if name_or_path in shipped_names():
        text = (resources.files("diagram.criteria") / f"{name_or_path}.yaml").read_text("utf-8")
        return _cached_parse(text, f"criteria/{name_or_path}.yaml", "shipped")
    path = Path(name_or_path)
    if relative_to is not None and not path.is_absolute():
        path = relative_to / path
    if not path.suffix and not path.exists():
        hint = difflib.get_close_matches(name_or_path, shipped_names(), n=1)
        raise CriteriaError(
            [
                Problem(
                    str(name_or_path),
                    None,
                    "exam.criteria",
                    repr(name_or_path),
                    f"is neither a shipped criteria set ({', '.join(shipped_names())}) nor a file.",
                    f"did you mean {hint[0]}?" if hint else None,
                )
            ]
        )
    try:
        data = path.read_bytes()
    except OSError as exc:
        raise CriteriaError(
            [Problem(str(path), None, "", None, f"cannot be read: {exc.strerror}.")]
        ) from None
    if len(data) > _MAX_BYTES:
        raise CriteriaError(
            [Problem(str(path), None, "", None, f"is larger than {_MAX_BYTES} bytes.")]
        )
    try:
        text = data.decode("utf-8")
    except UnicodeDecodeError:
        raise CriteriaError([Problem(str(path), None, "", None, "is not UTF-8 text.")]) from None
    return _cached_parse(text, str(path), str(path))


_SET_FIELDS = ("exam.criteria", "exam.stent_criteria", "exam.graft_criteria")


def load_sets(
    names: tuple[str, str, str], *, source: str, relative_to: Path | None = None
) -> CriteriaSets:
    """Return the native, stent and graft sets a study names, shipped sets or a lab's files.

    File names are taken relative to ``relative_to`` (the study's folder); a name that is neither
    a shipped set nor a file is reported as a problem of the study's field (``source`` is the
    study, for messages). This reads files: the command line and the batch call it, never the
    assessment.
    """
    native, stent, graft = (
        _load_named(name, relative_to, field, source)
        for name, field in zip(names, _SET_FIELDS, strict=True)
    )
    return CriteriaSets(native=native, stent=stent, graft=graft)


def shipped_sets(names: tuple[str, str, str], *, source: str) -> CriteriaSets:
    """Return the sets a study names when each is shipped with the package (no file is read).

    A lab's own file must be loaded first with :func:`load_sets` and passed in.
    """
    for name, field in zip(names, _SET_FIELDS, strict=True):
        if name not in shipped_names():
            rule = "is not a shipped criteria set: load the lab's file first and pass the sets in."
            raise StudyError([Problem(source, None, field, repr(name), rule)])
    return load_sets(names, source=source)


def _load_named(name: str, base: Path | None, field: str, source: str) -> Criteria:
    try:
        return load_criteria(name, relative_to=base)
    except CriteriaError as exc:
        if len(exc.problems) == 1 and exc.problems[0].field == "exam.criteria":
            p = exc.problems[0]
            raise StudyError([Problem(source, None, field, p.value, p.rule, p.hint)]) from None
        raise


@lru_cache(maxsize=32)
def _cached_parse(text: str, file: str, origin: str) -> Criteria:
    return parse_criteria(text, file, origin)
